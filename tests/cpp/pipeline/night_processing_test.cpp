// The night pipeline: site and frequency policies, stage reuse, and the site record of the
// night file.
#include "wvr/night_processing.hpp"

#include <gtest/gtest.h>
#include <hdf5.h>

#include <cstring>
#include <filesystem>
#include <type_traits>
#include <variant>

#include "pipeline/small_night.hpp"
#include "test_util.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"
#include "wvr/scenario.hpp"
#include "wvr/simulator.hpp"

namespace wvr {
namespace {

namespace fs = std::filesystem;

template <typename F>
std::string error_of(F&& f) {
  try {
    f();
  } catch (const InvalidInput& e) {
    return e.what();
  }
  return "";
}

TEST(NightSite, TheSimulatorRecordsTheScenarioSiteAndTheFileKeepsIt) {
  const Night& night = small_night();
  ASSERT_TRUE(night.site.has_value());
  const SiteConfig demo = load_site_config(test::testdata("sites/demo-site.toml"));
  EXPECT_EQ(night.site->site.name, demo.name);
  EXPECT_NE(night.site->provenance.find("pipeline test night"), std::string::npos);
  const fs::path path = fs::temp_directory_path() / "wvr_night_site_test.h5";
  fs::remove(path);
  write_night(night, path);
  const Night back = read_night(path);
  ASSERT_TRUE(back.site.has_value());
  EXPECT_EQ(back.site->provenance, night.site->provenance);
  EXPECT_EQ(back.site->site.latitude_deg, demo.latitude_deg);
  const SiteParameters& a = back.site->site.parameters;
  const SiteParameters& b = demo.parameters;
  EXPECT_EQ(a.altitude_m, b.altitude_m);
  EXPECT_EQ(a.surface_temperature_k, b.surface_temperature_k);
  EXPECT_EQ(a.lapse_rate_k_per_km, b.lapse_rate_k_per_km);
  EXPECT_EQ(a.water_scale_height_m, b.water_scale_height_m);
  EXPECT_EQ(a.pwv_mm, b.pwv_mm);
  EXPECT_EQ(a.inversion.has_value(), b.inversion.has_value());

  // A version-1 file (no /site) still reads, without a site record.
  {
    const hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT);
    ASSERT_GE(file, 0);
    const hid_t attribute = H5Aopen_by_name(file, "/", "schema_version", H5P_DEFAULT, H5P_DEFAULT);
    const int version = 1;
    ASSERT_GE(H5Awrite(attribute, H5T_NATIVE_INT, &version), 0);
    H5Aclose(attribute);
    ASSERT_GE(H5Ldelete(file, "/site", H5P_DEFAULT), 0);
    H5Fclose(file);
  }
  const Night old = read_night(path);
  EXPECT_FALSE(old.site.has_value());
  EXPECT_EQ(old.antenna_count(), night.antenna_count());
  fs::remove(path);
}

TEST(NightSite, GivenOverridesRecordWhichOverridesDefaults) {
  Night night = small_night();
  SiteConfig given = night.site->site;
  given.name = "given";
  given.parameters.surface_temperature_k += 5.0;
  EXPECT_EQ(resolve_night_site(night, given, "site file x.toml").source, SiteSource::kGiven);
  EXPECT_EQ(resolve_night_site(night, given, "site file x.toml").site.name, "given");
  EXPECT_EQ(resolve_night_site(night).source, SiteSource::kNightRecord);
  night.site.reset();
  const ResolvedSite defaults = resolve_night_site(night);
  EXPECT_EQ(defaults.source, SiteSource::kNightDefaults);
  EXPECT_NE(defaults.description.find("defaults"), std::string::npos);
  // Medians of the weather series and the array height.
  std::vector<double> t = night.weather.temperature_k;
  std::nth_element(t.begin(), t.begin() + static_cast<std::ptrdiff_t>(t.size() / 2), t.end());
  EXPECT_EQ(defaults.site.parameters.surface_temperature_k, t[t.size() / 2]);
  EXPECT_EQ(defaults.site.parameters.altitude_m, night.array.reference_height_m);
  EXPECT_EQ(defaults.site.parameters.lapse_rate_k_per_km, 6.5);
  EXPECT_EQ(defaults.site.parameters.water_scale_height_m, 2000.0);
}

TEST(ObservingFrequency, RequestedThenScansThenCalibratorRowsElseAnError) {
  Night night = small_night();
  EXPECT_EQ(night_observing_frequency(night).freq_ghz, 345.0);
  EXPECT_EQ(night_observing_frequency(night).source, FrequencySource::kScans);
  EXPECT_EQ(night_observing_frequency(night, 230.0).freq_ghz, 230.0);
  for (double bad : {0.0, -5.0, std::nan("")}) {
    EXPECT_NE(error_of([&] { night_observing_frequency(night, bad); }).find("obs_freq_ghz = "),
              std::string::npos);
  }
  for (Scan& scan : night.scans) scan.obs_freq_ghz = 0.0;
  EXPECT_EQ(night_observing_frequency(night).source, FrequencySource::kCalibratorRows);
  night.calibrator_phases = {};
  EXPECT_NE(error_of([&] { night_observing_frequency(night); }).find("no observing frequency"),
            std::string::npos);
}

TEST(NightProcessing, StoredStagesAreReusedOnlyWhenTheyMatch) {
  Night night = small_night();
  NightProcessingOptions options;
  options.last_stage = NightStage::kCorrection;
  const NightProcessingResult first = process_night(night, options);
  EXPECT_FALSE(first.retrieval_reused);
  EXPECT_FALSE(first.calibration_reused);
  ASSERT_EQ(first.result_groups.size(), 3u);  // retrieval, calibration, correction
  EXPECT_EQ(first.obs_freq->freq_ghz, 345.0);
  for (const ResultGroup& g : first.result_groups)
    if (g.stage != "correction") night.results.push_back(g);

  const NightProcessingResult again = process_night(night, options);
  EXPECT_TRUE(again.retrieval_reused);
  EXPECT_TRUE(again.calibration_reused);
  EXPECT_EQ(again.calibration->scale, first.calibration->scale);
  EXPECT_EQ(again.metrics->phase_rms_after_deg, first.metrics->phase_rms_after_deg);

  // Other retrieval options: the retrieval and everything after it are recomputed.
  NightProcessingOptions other_window = options;
  other_window.retrieval = NightRetrievalOptions{};
  other_window.retrieval->coefficient_window_s = 30.0;
  const NightProcessingResult recomputed = process_night(night, other_window);
  EXPECT_FALSE(recomputed.retrieval_reused);
  EXPECT_FALSE(recomputed.calibration_reused);

  // Another site replaces a retrieval made with the night's own.
  NightProcessingOptions other_site = options;
  other_site.site = night.site->site;
  other_site.site->parameters.water_scale_height_m = 1000.0;
  EXPECT_FALSE(process_night(night, other_site).retrieval_reused);
  // The same site given explicitly matches the stored one.
  other_site.site = night.site->site;
  EXPECT_TRUE(process_night(night, other_site).retrieval_reused);

  // Other calibration options: solved again.
  NightProcessingOptions per_antenna = options;
  per_antenna.calibration = CalibrationOptions{};
  per_antenna.calibration->antenna_scaling = AntennaScaling::kPerAntenna;
  const NightProcessingResult solved = process_night(night, per_antenna);
  EXPECT_TRUE(solved.retrieval_reused);
  EXPECT_FALSE(solved.calibration_reused);
}

TEST(NightProcessing, ARetrievalOfAnotherNightIsRefused) {
  Night night = small_night();
  NightProcessingOptions options;
  options.last_stage = NightStage::kRetrieval;
  const NightProcessingResult r = process_night(night, options);
  Night shorter = night;
  shorter.radiometer.time_s.resize(300);
  shorter.radiometer.brightness_k.clear();
  shorter.radiometer.valid.clear();
  const std::size_t nt = night.time_count(), nc = night.channel_count();
  for (std::size_t a = 0; a < night.antenna_count(); ++a) {
    for (std::size_t k = 0; k < 300; ++k) {
      shorter.radiometer.valid.push_back(night.radiometer.valid[a * nt + k]);
      for (std::size_t c = 0; c < nc; ++c)
        shorter.radiometer.brightness_k.push_back(
            night.radiometer.brightness_k[(a * nt + k) * nc + c]);
    }
  }
  shorter.results.push_back(r.result_groups.front());
  EXPECT_NE(error_of([&] { process_night(shorter, options); }).find("a retrieval of another night"),
            std::string::npos);
}

TEST(NightProcessing, EveryStageIsReachedAndBadOptionsAreRefusedFirst) {
  const Night& night = small_night();
  NightProcessingOptions options;
  const NightProcessingResult r = process_night(night, options);
  ASSERT_TRUE(r.diagnosis && r.turbulence && r.corrections);
  EXPECT_EQ(r.diagnosis->windows.size(), night.scans.size());
  EXPECT_TRUE(r.turbulence->wind.ok()) << r.turbulence->wind.message;
  // 9.2 m/s towards 77 deg in the scenario; the tolerance is the wind test's (10 %).
  EXPECT_NEAR(r.turbulence->wind.speed_m_s, std::hypot(9.0, 2.0), 0.1 * std::hypot(9.0, 2.0));
  options.turbulence.advice_target_rms_deg = -1.0;
  EXPECT_NE(error_of([&] { process_night(night, options); }).find("advice_target_rms_deg"),
            std::string::npos);
  options = {};
  options.obs_freq_ghz = 0.0;
  EXPECT_NE(error_of([&] { process_night(night, options); }).find("obs_freq_ghz = 0"),
            std::string::npos);
}

TEST(NightProcessing, TheResultDoesNotDependOnTheThreadCount) {
  // Every stored result, to the last bit, from one thread and from three (retrieval, the
  // scaling rows, the diagnosis' scans, the turbulence stage's pairs and phase sets).
  const Night& night = small_night();
  NightProcessingOptions one, three;
  one.threads = 1;
  three.threads = 3;
  const NightProcessingResult a = process_night(night, one), b = process_night(night, three);
  ASSERT_EQ(a.result_groups.size(), b.result_groups.size());
  ASSERT_GE(a.result_groups.size(), 4u);  // retrieval, calibration, correction, diagnosis
  for (std::size_t g = 0; g < a.result_groups.size(); ++g) {
    const ResultGroup &x = a.result_groups[g], &y = b.result_groups[g];
    ASSERT_EQ(x.stage, y.stage);
    EXPECT_EQ(x.attributes, y.attributes) << x.stage;
    ASSERT_EQ(x.datasets.size(), y.datasets.size()) << x.stage;
    for (std::size_t d = 0; d < x.datasets.size(); ++d) {
      const ResultDataset &u = x.datasets[d], &v = y.datasets[d];
      const std::string where = x.stage + "/" + u.name;
      ASSERT_EQ(u.name, v.name) << where;
      EXPECT_EQ(u.shape, v.shape) << where;
      EXPECT_EQ(u.attributes, v.attributes) << where;
      ASSERT_EQ(u.values.index(), v.values.index()) << where;
      std::visit(
          [&](const auto& values) {
            const auto& other = std::get<std::decay_t<decltype(values)>>(v.values);
            ASSERT_EQ(values.size(), other.size()) << where;
            using Element = typename std::decay_t<decltype(values)>::value_type;
            if constexpr (std::is_arithmetic_v<Element>) {  // bits: NaN equals NaN
              EXPECT_EQ(std::memcmp(values.data(), other.data(), values.size() * sizeof(Element)),
                        0)
                  << where;
            } else {
              EXPECT_EQ(values, other) << where;
            }
          },
          u.values);
    }
  }
  // The turbulence stage, not stored: its structure functions, fits and wind.
  ASSERT_TRUE(a.turbulence && b.turbulence);
  const auto same_bits = [](double x, double y) { return std::memcmp(&x, &y, sizeof x) == 0; };
  for (auto member :
       {&NightTurbulence::radiometer, &NightTurbulence::before, &NightTurbulence::after,
        &NightTurbulence::before_by_lag, &NightTurbulence::after_by_lag}) {
    const FittedStructureFunction &x = (*a.turbulence).*member, &y = (*b.turbulence).*member;
    EXPECT_EQ(x.message, y.message) << x.source;
    EXPECT_EQ(x.points.pair_count, y.points.pair_count) << x.source;
    ASSERT_EQ(x.points.value_m2.size(), y.points.value_m2.size()) << x.source;
    for (std::size_t i = 0; i < x.points.value_m2.size(); ++i) {
      EXPECT_TRUE(same_bits(x.points.separation[i], y.points.separation[i])) << x.source;
      EXPECT_TRUE(same_bits(x.points.value_m2[i], y.points.value_m2[i])) << x.source;
    }
    EXPECT_TRUE(same_bits(x.fit.amplitude_m2, y.fit.amplitude_m2)) << x.source;
    EXPECT_TRUE(same_bits(x.fit.alpha_short, y.fit.alpha_short)) << x.source;
  }
  EXPECT_TRUE(a.turbulence->after.measured()) << a.turbulence->after.message;
  EXPECT_TRUE(same_bits(a.turbulence->wind.speed_m_s, b.turbulence->wind.speed_m_s));
  EXPECT_TRUE(same_bits(a.turbulence->wind.direction_to_deg, b.turbulence->wind.direction_to_deg));
}

}  // namespace
}  // namespace wvr
