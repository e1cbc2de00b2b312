// Diagnosis thresholds from TOML files: names, defaults, and errors naming the file and key.
#include <gtest/gtest.h>

#include <set>
#include <string>

#include "test_util.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

TEST(DiagnosisThresholds, EveryFieldHasOneNameAndTheExampleFileHoldsTheDefaults) {
  // Each member is reached by exactly one name: set field k to k + 1 and read them back.
  DiagnosisThresholds t;
  const auto fields = diagnosis_threshold_fields();
  std::set<std::string> names;
  for (std::size_t k = 0; k < fields.size(); ++k) {
    t.*(fields[k].member) = static_cast<double>(k + 1);
    names.insert(fields[k].name);
    EXPECT_GT(std::string(fields[k].meaning).size(), 10u);
  }
  EXPECT_EQ(names.size(), fields.size());
  for (std::size_t k = 0; k < fields.size(); ++k)
    EXPECT_EQ(t.*(fields[k].member), static_cast<double>(k + 1)) << fields[k].name;
  EXPECT_EQ(sizeof(DiagnosisThresholds), fields.size() * sizeof(double));  // none left out
  const DiagnosisThresholds example =
      load_diagnosis_thresholds(test::testdata("diagnosis-thresholds.toml"));
  const DiagnosisThresholds defaults;
  for (const DiagnosisThresholdField& f : fields)
    EXPECT_EQ(example.*(f.member), defaults.*(f.member)) << f.name;
}

TEST(DiagnosisThresholds, ASubsetOverridesTheDefaults) {
  const DiagnosisThresholds t =
      parse_diagnosis_thresholds("cloud_chi2_per_dof = 12\ndry_floor_ratio = 3.5\n", "my.toml");
  EXPECT_EQ(t.cloud_chi2_per_dof, 12.0);
  EXPECT_EQ(t.dry_floor_ratio, 3.5);
  EXPECT_EQ(t.quiet_floor_ratio, DiagnosisThresholds{}.quiet_floor_ratio);
}

TEST(DiagnosisThresholds, BadFilesNameTheFileAndTheKey) {
  const auto message = [](const std::string& text) {
    try {
      parse_diagnosis_thresholds(text, "my.toml");
    } catch (const InvalidInput& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_NE(message("\ncloud_chi2 = 3\n")
                .find("my.toml:2: unknown threshold 'cloud_chi2' (did you mean "
                      "'cloud_chi2_per_dof'?)"),
            std::string::npos);
  EXPECT_NE(message("spike_fraction = \"high\"\n").find("my.toml: spike_fraction is not a number"),
            std::string::npos);
  EXPECT_NE(message("cloud_antenna_fraction = 1.5\n").find("my.toml: cloud_antenna_fraction = 1.5"),
            std::string::npos);
  EXPECT_NE(message("dry_floor_ratio = [\n").find("my.toml"), std::string::npos);
  EXPECT_THROW(load_diagnosis_thresholds("/nonexistent/thresholds.toml"), InvalidInput);
}

}  // namespace
}  // namespace wvr
