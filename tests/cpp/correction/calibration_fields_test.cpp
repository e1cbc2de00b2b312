// The field table of CalibrationResult: every field round-trips through the "calibration"
// result group, files written before the later fields still read, and every field is
// documented where users read about it (FORMAT.md, the Python stub).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "core/result_field_checks.hpp"
#include "test_util.hpp"
#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

constexpr std::size_t kAntennas = 3, kSegments = 2;

CalibrationResult numbered_calibration() {
  CalibrationResult c;
  c.status = CalibrationStatus::kNoConvergence;
  test::fill_numbered(c, calibration_fields(),
                      [](char axis) { return axis == 'a' ? kAntennas : kSegments; });
  return c;
}

TEST(CalibrationFields, EveryFieldRoundTripsThroughTheResultGroup) {
  const CalibrationResult c = numbered_calibration();
  const ResultGroup group = calibration_result_group(c);
  EXPECT_EQ(group.stage, "calibration");
  EXPECT_EQ(group.datasets.size(), calibration_fields().size());
  const CalibrationResult back = calibration_from_result_group(group, kAntennas, "test");
  test::expect_fields_equal(back, c, calibration_fields());
  EXPECT_EQ(back.status, c.status);
  EXPECT_EQ(back.message, c.brief_report());
}

TEST(CalibrationFields, ScalarsAreStoredAsScalarsAndTheChoiceAsOneByte) {
  const ResultGroup group = calibration_result_group(numbered_calibration());
  const ResultDataset* scale = group.find("scale");
  const ResultDataset* choice = group.find("per_antenna_scale");
  ASSERT_TRUE(scale && choice);
  EXPECT_TRUE(scale->shape.empty());
  EXPECT_TRUE(choice->shape.empty());
  EXPECT_TRUE(std::holds_alternative<std::vector<std::uint8_t>>(choice->values));
  EXPECT_EQ(group.find("antenna_scale")->shape, std::vector<std::size_t>{kAntennas});
  EXPECT_EQ(group.find("segment_scale")->shape, std::vector<std::size_t>{kSegments});
}

TEST(CalibrationFields, AGroupWithoutTheLaterFieldsReads) {
  // Before segmented solves and the per-night choice of the scaling.
  ResultGroup early = calibration_result_group(numbered_calibration());
  std::erase_if(early.datasets, [](const ResultDataset& d) {
    return d.name.starts_with("segment_") || d.name == "per_antenna_scale" ||
           d.name.starts_with("antenna_scale_st") || d.name.starts_with("antenna_scale_th");
  });
  ASSERT_EQ(early.datasets.size(), 4u);
  const CalibrationResult c = calibration_from_result_group(early, kAntennas, "early.h5");
  EXPECT_TRUE(c.segment_start_s.empty() && c.segment_scale.empty());
  EXPECT_TRUE(std::isnan(c.antenna_scale_statistic));
  EXPECT_TRUE(c.per_antenna_scale);  // its antenna scales differ from the array scale
}

TEST(CalibrationFields, AMissingOrMisshapedFieldIsNamed) {
  const ResultGroup group = calibration_result_group(numbered_calibration());
  const auto message = [](const ResultGroup& g, std::size_t antennas) {
    try {
      calibration_from_result_group(g, antennas, "night.h5");
    } catch (const InvalidInput& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  ResultGroup without = group;
  std::erase_if(without.datasets,
                [](const ResultDataset& d) { return d.name == "antenna_scale_sigma"; });
  EXPECT_EQ(message(without, kAntennas),
            "night.h5: /results/calibration/antenna_scale_sigma is missing");
  EXPECT_EQ(message(group, kAntennas + 1),
            "night.h5: /results/calibration/antenna_scale has an unexpected shape");
  ResultGroup wrong_type = group;
  for (ResultDataset& d : wrong_type.datasets)
    if (d.name == "scale") d.values = std::vector<std::uint8_t>{1};
  EXPECT_EQ(message(wrong_type, kAntennas),
            "night.h5: /results/calibration/scale does not hold double values");
}

TEST(CalibrationFields, EveryFieldIsDocumentedInTheFormatAndThePythonStub) {
  const std::string format = test::text_of(test::testdata("../libwvr/FORMAT.md"));
  const std::string stub = test::text_of(test::testdata("../bindings/python/wvr/_core.pyi"));
  test::expect_fields_documented(calibration_fields(),
                                 test::section_of(format, "`/results/calibration`", "`/results/"),
                                 test::section_of(stub, "class CalibrationResult:", "\nclass "));
}

}  // namespace
}  // namespace wvr
