// The synthetic-night simulator: determinism, consistency of brightness, phases and truth,
// faults, episodes and scenario validation.
#include "wvr/simulator.hpp"

#include <gtest/gtest.h>

#include <array>
#include <cmath>
#include <cstdint>
#include <iostream>
#include <numbers>

#include "test_util.hpp"
#include "wvr/constants.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_sky_model.hpp"

namespace wvr {
namespace {

const std::string kBase = R"(
name = "test night"
seed = 5
duration_s = 600.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 8
radius_m = 800.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -30.0
start_hour_angle_h = -0.5
[observing]
obs_freq_ghz = 230.0
calibrator_scan_s = 60.0
target_scan_s = 120.0
thermal_phase_noise_deg = 2.0
[[turbulence]]
kind = "wet"
height_m = 500.0
thickness_m = 500.0
outer_scale_m = 4000.0
wind_east_m_s = 8.0
wind_north_m_s = 0.0
path_rms_um = 200.0
)";

Scenario scenario(const std::string& extra = "") {
  return parse_scenario(kBase + extra, "test.toml", test::testdata(""));
}

TEST(Simulator, DeterministicAndIndependentOfThreadCount) {
  const Scenario s = scenario();
  const Night a = simulate_night(s, {1});
  const Night b = simulate_night(s, {2});
  EXPECT_EQ(a.radiometer.brightness_k, b.radiometer.brightness_k);
  EXPECT_EQ(a.calibrator_phases.phase_rad, b.calibrator_phases.phase_rad);
  EXPECT_EQ(a.truth->wet_path_m, b.truth->wet_path_m);
  Scenario other = s;
  other.seed = 6;
  EXPECT_NE(simulate_night(other).radiometer.brightness_k, a.radiometer.brightness_k);
}

TEST(Simulator, BrightnessIsTheSkyModelAtTheTruePwvPlusNoise) {
  const Scenario s = scenario();
  const Night night = simulate_night(s);
  validate_night(night);
  SiteParameters site = s.site.parameters;
  site.pwv_mm = 1.0;
  const FastSkyModel fast(make_parametric_profile(site), s.radiometer);
  auto ws = fast.make_workspace();
  std::vector<double> tb(4);
  const std::size_t nt = night.time_count();
  std::vector<double> sum2(4, 0.0);
  std::size_t n = 0;
  for (std::size_t a = 0; a < night.antenna_count(); ++a) {
    for (std::size_t k = 0; k < nt; k += 7) {
      const std::size_t at = a * nt + k;
      ASSERT_EQ(fast.evaluate(night.truth->pwv_mm[at], night.pointing.elevation_deg[at], ws, tb),
                FastModelStatus::kOk);
      for (std::size_t c = 0; c < 4; ++c) {
        const double r = night.radiometer.brightness_k[at * 4 + c] - tb[c];
        sum2[c] += r * r;
      }
      ++n;
    }
  }
  for (std::size_t c = 0; c < 4; ++c) {
    // Residual rms equals the channel noise of the radiometer file (within sampling error).
    EXPECT_NEAR(std::sqrt(sum2[c] / static_cast<double>(n)), s.radiometer.channels[c].noise_k,
                0.1 * s.radiometer.channels[c].noise_k)
        << c;
  }
  // Truth wet path is the line-of-sight PWV times the slant wet path per mm.
  const std::size_t at = 3 * nt + 100;
  EXPECT_NEAR(
      night.truth->wet_path_m[at],
      night.truth->pwv_mm[at] * fast.wet_path_per_pwv_m_per_mm(night.pointing.elevation_deg[at]),
      1e-12);
}

TEST(Simulator, CalibratorPhasesFollowTheTruePathDifference) {
  const Scenario s = scenario();
  const Night night = simulate_night(s);
  const std::size_t nt = night.time_count();
  const double k = 2.0 * std::numbers::pi * 230e9 / constants::speed_of_light_m_per_s;
  SiteParameters site = s.site.parameters;
  site.pwv_mm = 1.0;
  const double factor = wet_phase_per_path_factor(230.0, make_parametric_profile(site));
  double sum2 = 0.0;
  std::size_t rows = night.calibrator_phases.time_s.size();
  ASSERT_GT(rows, 0u);
  for (std::size_t r = 0; r < rows; ++r) {
    const double t = night.calibrator_phases.time_s[r];
    const auto [a, b] = night.calibrator_phases.antenna_pair[r];
    EXPECT_EQ(a, 0);
    const std::size_t i = static_cast<std::size_t>(t);
    const auto path = [&](int ant) {
      const std::size_t at = static_cast<std::size_t>(ant) * nt + i;
      return factor * night.truth->wet_path_m[at] + night.truth->dry_path_m[at];
    };
    const double expected = k * (path(b) - path(a));
    const double phase = night.calibrator_phases.phase_rad[r];
    EXPECT_GT(phase, -std::numbers::pi);
    EXPECT_LE(phase, std::numbers::pi);
    const double residual = std::remainder(phase - expected, 2.0 * std::numbers::pi);
    sum2 += residual * residual;
    // Only during calibrator scans.
    bool in_calibrator = false;
    for (const Scan& scan : night.scans) {
      in_calibrator |=
          scan.intent == ScanIntent::kCalibrator && t >= scan.start_s && t < scan.stop_s;
    }
    EXPECT_TRUE(in_calibrator) << t;
  }
  EXPECT_NEAR(std::sqrt(sum2 / static_cast<double>(rows)), 2.0 * std::numbers::pi / 180.0,
              0.1 * 2.0 * std::numbers::pi / 180.0);
}

// For each band of baseline lengths {d_min_m, d_max_m}: the mean over its baselines of the
// night's mean square wet-path difference (brought to zenith by the airmass) over the layer's
// structure function D(d). The requested amplitude makes it 1, up to the sample variance of
// one realisation.
std::vector<double> amplitude_ratios(std::uint64_t seed,
                                     const std::vector<std::array<double, 2>>& bands) {
  Scenario s = scenario();
  s.seed = seed;
  s.duration_s = 3000.0;
  s.array.radius_m = 1500.0;
  s.array.antenna_count = 12;
  s.turbulence[0].layer.thickness_m = 5000.0;  // thick: D ~ d^(5/3), easy to scale
  const Night night = simulate_night(s);
  const std::size_t nt = night.time_count();
  // Theory from the request as written in kBase (path_rms_um = 200), not from the parsed
  // scenario, so that a mis-read request fails too.
  TurbulentLayer requested = s.turbulence[0].layer;
  requested.path_rms_at_reference_m = 200e-6;
  const LayerSpectrum theory(requested);
  std::vector<double> ratio_sum(bands.size(), 0.0);
  std::vector<int> pairs(bands.size(), 0);
  for (std::size_t a = 0; a < night.antenna_count(); ++a) {
    for (std::size_t b = a + 1; b < night.antenna_count(); ++b) {
      const auto& pa = night.array.position_enu_m[a];
      const auto& pb = night.array.position_enu_m[b];
      const double d = std::hypot(pa[0] - pb[0], pa[1] - pb[1]);
      double sum2 = 0.0;
      for (std::size_t k = 0; k < nt; ++k) {
        const double am =
            1.0 / std::sin(night.pointing.elevation_deg[a * nt + k] * std::numbers::pi / 180.0);
        const double diff =
            (night.truth->wet_path_m[b * nt + k] - night.truth->wet_path_m[a * nt + k]) / am;
        sum2 += diff * diff;
      }
      for (std::size_t i = 0; i < bands.size(); ++i) {
        if (d < bands[i][0] || d > bands[i][1]) continue;
        ratio_sum[i] += sum2 / static_cast<double>(nt) / theory.structure_function_m2(d);
        ++pairs[i];
      }
    }
  }
  for (std::size_t i = 0; i < bands.size(); ++i) {
    EXPECT_GT(pairs[i], 3) << "seed " << seed << " band " << i;
    ratio_sum[i] /= pairs[i];
  }
  return ratio_sum;
}

TEST(Simulator, TurbulenceAmplitudeMatchesRequest) {
  // One night's ratio scatters with the few independent screen patches it holds: over seeds
  // 1-20 (DISABLED_TurbulenceAmplitudeSpreadOverSeeds) the mean of the 300-700 m and
  // 700-1400 m ratios is 0.997 with a standard deviation of 0.100 per night (700-1400 m alone:
  // 0.128, range 0.79-1.25). The mean over seeds 1-5 then scatters by 0.100 / sqrt(5) = 0.045;
  // allowed 3 sigma = 0.135. An amplitude 10 % off (D 21 % off) fails.
  double sum = 0.0;
  const int nights = 5;
  for (std::uint64_t seed = 1; seed <= nights; ++seed) {
    const auto r = amplitude_ratios(seed, {{300.0, 700.0}, {700.0, 1400.0}});
    sum += 0.5 * (r[0] + r[1]);
  }
  EXPECT_NEAR(sum / nights, 1.0, 0.135);
}

// The spread of amplitude_ratio over seeds, from which the tolerance above is set
// (run with --gtest_also_run_disabled_tests).
TEST(Simulator, DISABLED_TurbulenceAmplitudeSpreadOverSeeds) {
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {
    const auto r = amplitude_ratios(seed, {{100.0, 300.0}, {300.0, 700.0}, {700.0, 1400.0}});
    std::cout << "seed " << seed << ": 100-300 m " << r[0] << ", 300-700 m " << r[1]
              << ", 700-1400 m " << r[2] << "\n";
  }
}

TEST(Simulator, FaultsCloudsAndEpisodes) {
  const Scenario s = scenario(R"(
[[clouds]]
start_s = 200.0
stop_s = 400.0
liquid_water_path_kg_m2 = 0.2
ramp_s = 10.0
[[faults]]
antenna = 1
kind = "dropout"
start_s = 50.0
stop_s = 59.0
[[faults]]
antenna = 2
kind = "dead_channel"
channel = 3
start_s = 0.0
stop_s = 600.0
[[faults]]
antenna = 3
kind = "stuck_channel"
channel = 0
start_s = 100.0
stop_s = 300.0
[[faults]]
antenna = 4
kind = "spike"
start_s = 0.0
stop_s = 600.0
magnitude = 20.0
)");
  const Night night = simulate_night(s);
  const std::size_t nt = night.time_count();
  auto tb = [&](std::size_t a, std::size_t k, std::size_t c) {
    return night.radiometer.brightness_k[(a * nt + k) * 4 + c];
  };
  EXPECT_EQ(night.radiometer.valid[1 * nt + 55], 0);
  EXPECT_TRUE(std::isnan(tb(1, 55, 0)));
  EXPECT_EQ(night.radiometer.valid[1 * nt + 60], 1);
  EXPECT_TRUE(std::isnan(tb(2, 10, 3)));
  EXPECT_FALSE(std::isnan(tb(2, 10, 2)));
  EXPECT_EQ(tb(3, 150, 0), tb(3, 250, 0));
  EXPECT_NE(tb(3, 350, 0), tb(3, 250, 0));
  int spikes = 0;
  for (std::size_t k = 1; k < nt; ++k) spikes += std::abs(tb(4, k, 3) - tb(4, k - 1, 3)) > 10.0;
  EXPECT_GT(spikes, 5);
  // The cloud raises the outer (window-most) channel on every antenna.
  EXPECT_GT(tb(0, 300, 3) - tb(0, 150, 3), 1.0);
  int clouds = 0, faults = 0;
  for (const TruthEpisode& e : night.truth->episodes) {
    clouds += e.label == "cloud";
    faults += e.label.rfind("radiometer fault", 0) == 0;
  }
  EXPECT_EQ(clouds, 1);
  EXPECT_EQ(faults, 4);
}

TEST(Simulator, LabelledTurbulenceScheduleBecomesAnEpisode) {
  const Scenario s = scenario(R"(
[[turbulence]]
kind = "dry"
height_m = 300.0
thickness_m = 300.0
outer_scale_m = 2000.0
wind_east_m_s = 5.0
wind_north_m_s = 1.0
path_rms_um = 100.0
schedule = [[0.0, 0.0], [200.0, 0.0], [210.0, 1.0], [400.0, 1.0], [410.0, 0.0]]
label = "dry turbulence"
)");
  const Night night = simulate_night(s);
  bool found = false;
  for (const TruthEpisode& e : night.truth->episodes) {
    if (e.label != "dry turbulence") continue;
    found = true;
    EXPECT_NEAR(e.start_s, 206.0, 1.0);
    EXPECT_NEAR(e.stop_s, 406.0, 1.0);
  }
  EXPECT_TRUE(found);
  const std::size_t nt = night.time_count();
  EXPECT_EQ(night.truth->dry_path_m[2 * nt + 100], 0.0);
  EXPECT_NE(night.truth->dry_path_m[2 * nt + 300], 0.0);
}

std::string scenario_error(const std::string& extra,
                           const std::string& replace_from = "",
                           const std::string& replace_to = "") {
  std::string text = kBase + extra;
  if (!replace_from.empty()) text.replace(text.find(replace_from), replace_from.size(), replace_to);
  try {
    parse_scenario(text, "bad.toml", test::testdata(""));
  } catch (const InvalidInput& e) {
    return e.what();
  }
  return "";
}

TEST(Scenario, ErrorsNameTheField) {
  EXPECT_NE(scenario_error("", "duration_s = 600.0", "duration_s = -5.0").find("duration_s = -5"),
            std::string::npos);
  EXPECT_NE(
      scenario_error("", "site_file = \"sites/demo-site.toml\"", "").find("missing site_file"),
      std::string::npos);
  EXPECT_NE(scenario_error("", "sites/demo-site.toml", "sites/none.toml").find("cannot be opened"),
            std::string::npos);
  EXPECT_NE(
      scenario_error("[[faults]]\nantenna = 99\nkind = \"spike\"\nstart_s = 0.0\nstop_s = 1.0\n")
          .find("faults[0].antenna = 99"),
      std::string::npos);
  EXPECT_NE(
      scenario_error("[[faults]]\nantenna = 1\nkind = \"melted\"\nstart_s = 0.0\nstop_s = 1.0\n")
          .find("melted"),
      std::string::npos);
  EXPECT_NE(scenario_error("", "path_rms_um = 200.0", "path_rms_um = -1.0")
                .find("path_rms_at_reference_m"),
            std::string::npos);
  EXPECT_NE(scenario_error("", "layout = \"random\"", "layout = \"ring\"").find("ring"),
            std::string::npos);
  EXPECT_NE(scenario_error("", "kind = \"wet\"", "kind = \"damp\"").find("damp"),
            std::string::npos);
  EXPECT_NE(scenario_error("", "pwv_mm = 1.0", "pwv_mm = nan").find("pwv_mm = nan"),
            std::string::npos);
  EXPECT_NE(scenario_error("", "obs_freq_ghz = 230.0", "obs_freq_ghz = 2000.0")
                .find("obs_freq_ghz = 2000"),
            std::string::npos);
  // A source that never rises high enough is refused at simulation time.
  Scenario low = scenario();
  low.source.declination_deg = 70.0;
  EXPECT_THROW(simulate_night(low), InvalidInput);
}

TEST(Scenario, DemoScenarioLoads) {
  const Scenario s = load_scenario(test::testdata("demo-scenario.toml"));
  EXPECT_EQ(s.array.antenna_count, 40);
  EXPECT_EQ(s.turbulence.size(), 2u);
  EXPECT_EQ(s.time_count(), 7200u);
}

}  // namespace
}  // namespace wvr
