// Night-mode retrieval on simulated nights with known truth, and bad input.
#include "wvr/night_retrieval.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

const std::string kNight = R"(
name = "retrieval test night"
seed = 11
duration_s = 900.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 6
radius_m = 600.0
[atmosphere]
pwv_mm = 1.5
pwv_drift_mm_per_hour = 0.4
cloud_base_above_ground_m = 1000.0
cloud_thickness_m = 800.0
[source]
declination_deg = -40.0
start_hour_angle_h = -1.0
[[turbulence]]
kind = "wet"
height_m = 600.0
thickness_m = 600.0
outer_scale_m = 5000.0
wind_east_m_s = 6.0
wind_north_m_s = 2.0
path_rms_um = 300.0
)";

Scenario scenario(const std::string& extra = "") {
  return parse_scenario(kNight + extra, "test.toml", test::testdata(""));
}

SiteParameters demo_site() {
  return load_site_config(test::testdata("sites/demo-site.toml")).parameters;
}

TEST(NightRetrieval, PwvFollowsTheTruthWithinTheNoise) {
  const Night night = simulate_night(scenario());
  const NightRetrieval r = retrieve_night(night, demo_site());
  const std::size_t n = r.antennas * r.samples;
  double sum = 0.0, sum2 = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    ASSERT_EQ(r.flags[i] & kRetrievalUnusable, 0) << describe_retrieval_flags(r.flags[i]);
    const double pull = (r.pwv_mm[i] - night.truth->pwv_mm[i]) / r.pwv_sigma_mm[i];
    sum += pull;
    sum2 += pull * pull;
  }
  const double mean = sum / static_cast<double>(n);
  const double spread = std::sqrt(sum2 / static_cast<double>(n) - mean * mean);
  EXPECT_LT(std::abs(mean), 0.2);
  EXPECT_NEAR(spread, 1.0, 0.1);
  const NightRetrievalSummary s = summarize(r);
  EXPECT_EQ(s.samples_flagged, 0u);
  EXPECT_NEAR(s.chi2_per_dof_median, 0.79, 0.15);  // median of chi2(3)/3
  EXPECT_EQ(r.windows, 15u);
}

TEST(NightRetrieval, CoefficientsMatchFiniteDifferencesOfTheForwardModel) {
  const Night night = simulate_night(scenario());
  const NightRetrieval r = retrieve_night(night, demo_site());
  SiteParameters site = demo_site();
  site.pwv_mm = 1.0;
  const SkyModel sky;
  const AtmosphereProfile shape = make_parametric_profile(site);
  const std::size_t nc = r.channels;
  for (std::size_t a : {0u, 3u}) {
    for (std::size_t w : {0u, 7u, 14u}) {
      const std::size_t aw = a * r.windows + w;
      const double pwv = r.window_pwv_mm[aw];
      const double el = night.pointing.elevation_deg[a * r.samples + w * 60 + 30];
      const double h = 1e-3;
      const ChannelBrightness up =
          sky.channels(shape.scaled_to_pwv(pwv + h), night.radiometer.config, el);
      const ChannelBrightness down =
          sky.channels(shape.scaled_to_pwv(pwv - h), night.radiometer.config, el);
      const double d_path_mm = (up.wet_path_m - down.wet_path_m) * 1000.0;
      for (std::size_t c = 0; c < nc; ++c) {
        const double truth = (up.brightness_k[c] - down.brightness_k[c]) / d_path_mm;
        EXPECT_NEAR(r.path_sensitivity_k_per_mm[aw * nc + c] / truth, 1.0, 0.01)
            << "a " << a << " w " << w << " c " << c;
      }
      double sum = 0.0;
      for (std::size_t c = 0; c < nc; ++c)
        sum +=
            r.combination_weight_mm_per_k[aw * nc + c] * r.path_sensitivity_k_per_mm[aw * nc + c];
      EXPECT_NEAR(sum, 1.0, 1e-12);  // the weights reproduce a pure path change exactly
    }
  }
}

TEST(NightRetrieval, CloudShowsAsChiSquareJumpAndIsRecoveredWhenFitted) {
  const Night night = simulate_night(scenario(R"(
[[clouds]]
start_s = 300.0
stop_s = 600.0
liquid_water_path_kg_m2 = 0.1
ramp_s = 5.0
)"));
  const NightRetrieval clear_fit = retrieve_night(night, demo_site());
  // Windows 0-4 clear, 5-9 inside the cloud (after the ramp), 10-14 clear.
  double chi_clear = 0.0, chi_cloud = 0.0;
  for (std::size_t a = 0; a < clear_fit.antennas; ++a) {
    chi_clear += clear_fit.window_chi2_per_dof[a * clear_fit.windows + 2];
    chi_cloud += clear_fit.window_chi2_per_dof[a * clear_fit.windows + 7];
  }
  EXPECT_GT(chi_cloud, 10.0 * chi_clear);
  NightRetrievalOptions options;
  options.window_fit.fit_liquid = true;
  const NightRetrieval cloud_fit = retrieve_night(night, demo_site(), options);
  for (std::size_t a = 0; a < cloud_fit.antennas; ++a) {
    EXPECT_NEAR(cloud_fit.window_liquid_kg_m2[a * cloud_fit.windows + 7], 0.1, 0.02) << a;
    EXPECT_LT(cloud_fit.window_liquid_kg_m2[a * cloud_fit.windows + 2], 0.01) << a;
  }
}

TEST(NightRetrieval, BadSamplesAreFlaggedWithReasons) {
  Night night = simulate_night(scenario(R"(
[[faults]]
antenna = 1
kind = "dropout"
start_s = 100.0
stop_s = 110.0
[[faults]]
antenna = 2
kind = "dead_channel"
channel = 1
start_s = 0.0
stop_s = 900.0
)"));
  const std::size_t nt = night.time_count();
  night.radiometer.brightness_k[(3 * nt + 50) * 4 + 0] = -5.0;
  night.pointing.elevation_deg[4 * nt + 70] = 12.0;  // below the table's 14 deg
  night.weather = {};
  const NightRetrieval r = retrieve_night(night, demo_site());
  EXPECT_TRUE(r.flags[1 * nt + 105] & kFlagInvalidInFile);
  EXPECT_TRUE(r.flags[2 * nt + 10] & kFlagBadBrightness);
  EXPECT_TRUE(r.flags[3 * nt + 50] & kFlagBadBrightness);
  EXPECT_TRUE(r.flags[4 * nt + 70] & kFlagOutOfDomain);
  // The pointing, not the sky: the elevation bit says which limit was crossed.
  EXPECT_TRUE(r.flags[4 * nt + 70] & kFlagElevationOutOfDomain);
  EXPECT_FALSE(r.flags[4 * nt + 71] & kFlagElevationOutOfDomain);
  EXPECT_EQ(r.table_min_elevation_deg, PwvTableOptions{}.min_elevation_deg);
  EXPECT_TRUE(r.flags[0] & kFlagNoWeather);
  EXPECT_FALSE(r.flags[0] & kRetrievalUnusable);
  EXPECT_TRUE(std::isfinite(r.pwv_mm[0]));
  EXPECT_TRUE(std::isnan(r.pwv_mm[3 * nt + 50]));
  // Antenna 2 lost a channel everywhere: every window reports no valid samples.
  EXPECT_TRUE(r.window_flags[2 * r.windows + 3] & kFlagNoValidSamples);
  EXPECT_EQ(describe_retrieval_flags(kFlagInvalidInFile | kFlagNoWeather),
            "invalid in file, no weather");
  const NightRetrievalSummary s = summarize(r);
  EXPECT_EQ(s.samples_flagged, nt + 11 + 2);
  // The result group carries every dataset with units.
  const ResultGroup g = to_result_group(r, night);
  EXPECT_EQ(g.stage, "retrieval");
  ASSERT_NE(g.find("pwv_mm"), nullptr);
  EXPECT_EQ(g.find("pwv_mm")->units, "mm");
  EXPECT_EQ(g.find("path_sensitivity_k_per_mm")->shape, (std::vector<std::size_t>{6, 15, 4}));
}

}  // namespace
}  // namespace wvr
