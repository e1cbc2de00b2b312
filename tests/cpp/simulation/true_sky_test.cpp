// Nights the retrieval's model did not make: the scenario's [true_sky] (absorption model,
// profile shape, water continuum) and the radiometers' calibration errors, and their record
// in the truth.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <filesystem>

#include "test_util.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"
#include "wvr/simulator.hpp"
#include "wvr/sky_model.hpp"

namespace wvr {
namespace {

Scenario mismatched() { return load_scenario(test::testdata("scenarios/mismatched-small.toml")); }

// The same night with a short duration, made by the retrieval's model.
Scenario short_night(Scenario s) {
  s.duration_s = 120.0;
  return s;
}

TEST(TrueSky, MismatchedScenarioParses) {
  const Scenario s = mismatched();
  EXPECT_EQ(s.true_sky.absorption_model, "r17");
  EXPECT_DOUBLE_EQ(s.true_sky.water_continuum_scale, 1.1);
  EXPECT_DOUBLE_EQ(*s.true_sky.lapse_rate_k_per_km, 5.5);
  EXPECT_DOUBLE_EQ(*s.true_sky.water_scale_height_m, 1800.0);
  ASSERT_TRUE(s.true_sky.inversion.has_value());
  EXPECT_DOUBLE_EQ(s.true_sky.inversion->temperature_jump_k, 4.0);
  EXPECT_DOUBLE_EQ(s.true_sky.calibration.gain_sigma, 0.03);
  // The site the retrieval will use is the file's, untouched.
  EXPECT_DOUBLE_EQ(s.site.parameters.lapse_rate_k_per_km, 6.5);
  EXPECT_FALSE(s.site.parameters.inversion.has_value());
  const SiteParameters sky = s.true_sky.apply_to(s.site.parameters);
  EXPECT_DOUBLE_EQ(sky.lapse_rate_k_per_km, 5.5);
  EXPECT_DOUBLE_EQ(sky.water_scale_height_m, 1800.0);
  EXPECT_TRUE(sky.inversion.has_value());
}

TEST(TrueSky, DemoNightIsMismatchedAndTheMatchedCopyIsNot) {
  const Scenario demo = load_scenario(test::testdata("demo-scenario.toml"));
  EXPECT_EQ(demo.true_sky.absorption_model, "r17");
  EXPECT_NEAR(*demo.true_sky.lapse_rate_k_per_km - demo.site.parameters.lapse_rate_k_per_km, -0.5,
              1e-12);
  EXPECT_DOUBLE_EQ(demo.true_sky.calibration.offset_sigma_k, 1.0);
  EXPECT_DOUBLE_EQ(demo.true_sky.calibration.gain_sigma, 0.02);
  const Scenario matched = load_scenario(test::testdata("scenarios/matched-demo.toml"));
  EXPECT_TRUE(matched.true_sky.describe().empty());
  EXPECT_EQ(matched.seed, demo.seed);
}

TEST(TrueSky, CalibrationErrorsAreAppliedAsRecorded) {
  // Only calibration errors: the sky (and its noise stream) equals the clean night's, so
  // every sample must be (1 + g + g' h) T + o + o' h of the clean one.
  Scenario with = short_night(mismatched());
  with.true_sky = TrueSky{};
  with.true_sky.calibration = mismatched().true_sky.calibration;
  Scenario without = with;
  without.true_sky.calibration = CalibrationErrorSpec{};
  const Night a = simulate_night(with);
  const Night b = simulate_night(without);
  ASSERT_TRUE(a.truth && b.truth);
  const NightTruth& t = *a.truth;
  const std::size_t na = a.antenna_count(), nt = a.time_count(), nc = a.channel_count();
  ASSERT_EQ(t.calibration_offset_k.size(), na * nc);
  EXPECT_TRUE(b.truth->calibration_offset_k.empty());
  double offset_rms = 0.0, gain_rms = 0.0;
  for (std::size_t i = 0; i < na * nc; ++i) {
    offset_rms += t.calibration_offset_k[i] * t.calibration_offset_k[i];
    gain_rms += t.calibration_gain[i] * t.calibration_gain[i];
  }
  // 32 draws: the sample rms is within ~25 % of the spread (chi-square, 32 dof, ~2.5 sigma).
  EXPECT_NEAR(std::sqrt(offset_rms / static_cast<double>(na * nc)), 1.5, 0.4);
  EXPECT_NEAR(std::sqrt(gain_rms / static_cast<double>(na * nc)), 0.03, 0.008);
  for (std::size_t ant = 0; ant < na; ++ant) {
    for (std::size_t k = 0; k < nt; k += 17) {
      const double hours = (a.radiometer.time_s[k] - a.radiometer.time_s[0]) / 3600.0;
      for (std::size_t c = 0; c < nc; ++c) {
        const std::size_t e = ant * nc + c;
        const double clean = b.radiometer.brightness_k[(ant * nt + k) * nc + c];
        const double expected =
            (1.0 + t.calibration_gain[e] + t.calibration_gain_drift_per_hour[e] * hours) * clean +
            t.calibration_offset_k[e] + t.calibration_offset_drift_k_per_hour[e] * hours;
        ASSERT_NEAR(a.radiometer.brightness_k[(ant * nt + k) * nc + c], expected, 1e-9);
      }
    }
  }
  // The truth path is the sky's, untouched by the radiometers.
  EXPECT_EQ(a.truth->wet_path_m, b.truth->wet_path_m);
}

TEST(TrueSky, OtherAbsorptionModelChangesBrightnessByTheModelDifference) {
  Scenario r17 = short_night(mismatched());
  r17.true_sky = TrueSky{};
  r17.true_sky.absorption_model = "r17";
  Scenario p676 = r17;
  p676.true_sky.absorption_model = "p676";
  const Night a = simulate_night(r17);
  const Night b = simulate_night(p676);
  // Same PWV and noise draws: the difference of the first sample is the model difference at
  // the truth PWV and elevation (fast model exact to < 0.02 K each).
  SiteParameters site = r17.site.parameters;
  site.pwv_mm = a.truth->pwv_mm[0];
  site.surface_relative_humidity_pct.reset();
  const AtmosphereProfile profile = make_parametric_profile(site);
  const double el = a.pointing.elevation_deg[0];
  const ChannelBrightness exact_r17 =
      SkyModel(make_absorption_model("r17")).channels(profile, r17.radiometer, el);
  const ChannelBrightness exact_p676 =
      SkyModel(make_absorption_model("p676")).channels(profile, r17.radiometer, el);
  double largest = 0.0;
  for (std::size_t c = 0; c < a.channel_count(); ++c) {
    const double simulated = a.radiometer.brightness_k[c] - b.radiometer.brightness_k[c];
    const double modelled = exact_r17.brightness_k[c] - exact_p676.brightness_k[c];
    EXPECT_NEAR(simulated, modelled, 0.05) << "channel " << c;
    largest = std::max(largest, std::abs(modelled));
  }
  EXPECT_GT(largest, 0.3);  // the two models do differ on the demo radiometer
}

TEST(TrueSky, ProfileShapeOfTheSkyIsUsed) {
  Scenario warm = short_night(mismatched());
  warm.true_sky = TrueSky{};
  warm.true_sky.lapse_rate_k_per_km = 5.5;
  Scenario site = warm;
  site.true_sky.lapse_rate_k_per_km.reset();
  const Night a = simulate_night(warm);
  const Night b = simulate_night(site);
  // Same PWV and noise draws: the brightness differs only through the sky's profile shape
  // (by 0.04-0.4 K on the demo radiometer for 1 K/km of lapse rate; noise draws are equal).
  for (std::size_t c = 0; c < a.channel_count(); ++c)
    EXPECT_GT(std::abs(a.radiometer.brightness_k[c] - b.radiometer.brightness_k[c]), 0.02) << c;
  ASSERT_EQ(a.truth->sky_differences.size(), 1u);
  EXPECT_EQ(a.truth->sky_differences[0].first, "lapse_rate_k_per_km");
  EXPECT_EQ(a.truth->sky_differences[0].second, "5.5");
  // The night records the site model, not the sky.
  ASSERT_TRUE(a.site.has_value());
  EXPECT_DOUBLE_EQ(a.site->site.parameters.lapse_rate_k_per_km, 6.5);
}

TEST(TrueSky, TruthRoundTripsThroughTheNightFile) {
  const Night night = simulate_night(short_night(mismatched()));
  const std::filesystem::path path = std::filesystem::temp_directory_path() /
                                     ("wvr_true_sky_" + std::to_string(::getpid()) + ".h5");
  NightWriteOptions options;
  options.overwrite_output = true;
  write_night(night, path, options);
  const Night back = read_night(path);
  std::filesystem::remove(path);
  ASSERT_TRUE(back.truth.has_value());
  EXPECT_EQ(back.truth->calibration_offset_k, night.truth->calibration_offset_k);
  EXPECT_EQ(back.truth->calibration_gain, night.truth->calibration_gain);
  EXPECT_EQ(back.truth->calibration_offset_drift_k_per_hour,
            night.truth->calibration_offset_drift_k_per_hour);
  EXPECT_EQ(back.truth->calibration_gain_drift_per_hour,
            night.truth->calibration_gain_drift_per_hour);
  auto sorted = [](auto v) {
    std::sort(v.begin(), v.end());
    return v;
  };
  EXPECT_EQ(sorted(back.truth->sky_differences), sorted(night.truth->sky_differences));
  EXPECT_GE(night.truth->sky_differences.size(), 9u);
}

TEST(TrueSky, BadValuesAreRefusedByName) {
  const std::string base = R"(
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
antenna_count = 4
)";
  auto error_of = [&](const std::string& extra) {
    try {
      parse_scenario(base + extra, "bad.toml", test::testdata(""));
    } catch (const InvalidInput& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_NE(error_of("[true_sky]\nabsorption_model = \"mpm\"\n")
                .find("true_sky.absorption_model = \"mpm\""),
            std::string::npos);
  EXPECT_NE(error_of("[true_sky.calibration]\ngain_sigma = -0.1\n").find("gain_sigma"),
            std::string::npos);
  EXPECT_NE(error_of("[atmosphere]\nwater_continuum_scale = 1.1\n[true_sky]\n"
                     "water_continuum_scale = 1.2\n")
                .find("both set"),
            std::string::npos);
  EXPECT_NE(error_of("[true_sky]\nlapse_rate_k_per_km = 40.0\n").find("lapse_rate_k_per_km"),
            std::string::npos);
  // The older spelling still works.
  EXPECT_EQ(error_of("[atmosphere]\nwater_continuum_scale = 1.1\n"), "no error");
}

}  // namespace
}  // namespace wvr
