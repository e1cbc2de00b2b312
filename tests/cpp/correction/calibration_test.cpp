// Scaling solve and correction on simulated nights with known truth.
#include "wvr/calibration.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <cstring>
#include <iostream>
#include <map>
#include <numbers>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

std::string night_text(double obs_freq_ghz, const std::string& extra) {
  return R"(
name = "calibration test night"
seed = 23
duration_s = 1500.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 8
radius_m = 1200.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -40.0
start_hour_angle_h = -1.0
[observing]
calibrator_scan_s = 90.0
target_scan_s = 60.0
thermal_phase_noise_deg = 2.0
obs_freq_ghz = )" +
         std::to_string(obs_freq_ghz) + R"(
[[turbulence]]
kind = "wet"
height_m = 700.0
thickness_m = 800.0
outer_scale_m = 5000.0
wind_east_m_s = 9.0
wind_north_m_s = 2.0
path_rms_um = 400.0
)" + extra;
}

struct Solved {
  Scenario scenario;
  Night night;
  NightRetrieval retrieval;
  CoefficientWindows coefficients;
  AntennaPaths paths;
  PhasePerPath factor;
  CalibrationResult calibration;
  CorrectionMetrics metrics;
};

Solved solve(double obs_freq_ghz, const std::string& extra = "", CalibrationOptions options = {}) {
  Solved s;
  s.scenario = parse_scenario(night_text(obs_freq_ghz, extra), "test.toml", test::testdata(""));
  s.night = simulate_night(s.scenario);
  s.retrieval = retrieve_night(s.night, s.scenario.site.parameters);
  s.coefficients = CoefficientWindows::from_retrieval(s.retrieval);
  s.paths = compute_wvr_paths(s.night, s.coefficients);
  s.factor = site_phase_per_path(s.scenario.site.parameters);
  s.calibration = solve_scaling(s.night, s.paths, s.factor, options);
  s.metrics = evaluate_correction(s.night, s.paths, s.calibration.antenna_scale, s.factor);
  return s;
}

// The scale that maps the radiometer path changes onto the true wet path changes within
// calibrator scans (least squares after removing each scan's mean per baseline).
double true_scale(const Solved& s) {
  const std::size_t nt = s.night.time_count();
  std::map<std::pair<int, std::size_t>, std::vector<std::pair<double, double>>> groups;
  for (const Scan& scan : s.night.scans) {
    if (scan.intent != ScanIntent::kCalibrator) continue;
    for (std::size_t k = static_cast<std::size_t>(scan.start_s);
         k < std::min<std::size_t>(nt, static_cast<std::size_t>(scan.stop_s)); ++k) {
      for (std::size_t b = 1; b < s.night.antenna_count(); ++b) {
        const double wvr = s.paths.path_mm[b * nt + k] - s.paths.path_mm[k];
        const double truth =
            (s.night.truth->wet_path_m[b * nt + k] - s.night.truth->wet_path_m[k]) * 1000.0;
        groups[{static_cast<int>(b), static_cast<std::size_t>(scan.start_s)}].emplace_back(wvr,
                                                                                           truth);
      }
    }
  }
  double sxy = 0.0, sxx = 0.0;
  for (const auto& [key, points] : groups) {
    double mx = 0.0, my = 0.0;
    for (const auto& [x, y] : points) {
      mx += x;
      my += y;
    }
    mx /= static_cast<double>(points.size());
    my /= static_cast<double>(points.size());
    for (const auto& [x, y] : points) {
      sxy += (x - mx) * (y - my);
      sxx += (x - mx) * (x - mx);
    }
  }
  return sxy / sxx;
}

TEST(Calibration, WetTurbulenceIsCorrectedToTheNoiseFloor) {
  const Solved s = solve(230.0);
  ASSERT_TRUE(s.calibration.ok()) << s.calibration.brief_report();
  EXPECT_NEAR(s.calibration.scale, true_scale(s), 0.02 * true_scale(s));
  EXPECT_GT(s.metrics.improvement_factor, 3.0);
  // Floor per baseline: thermal phase noise and the radiometer path noise of both antennas.
  const double k =
      2.0 * std::numbers::pi * 230e9 / constants::speed_of_light_m_per_s * 1e-3 * s.factor(230.0);
  std::vector<double> noise(s.night.antenna_count(), 0.0);
  for (std::size_t a = 0; a < noise.size(); ++a) {
    std::vector<double> v(
        s.retrieval.path_noise_mm.begin() + static_cast<std::ptrdiff_t>(a * s.retrieval.windows),
        s.retrieval.path_noise_mm.begin() +
            static_cast<std::ptrdiff_t>((a + 1) * s.retrieval.windows));
    std::sort(v.begin(), v.end());
    noise[a] = v[v.size() / 2] * s.calibration.scale;
  }
  const double thermal = 2.0 * std::numbers::pi / 180.0;
  for (const BaselineMetrics& b : s.metrics.baselines) {
    const double floor_rad =
        std::sqrt(thermal * thermal + k * k *
                                          (noise[static_cast<std::size_t>(b.antenna_a)] *
                                               noise[static_cast<std::size_t>(b.antenna_a)] +
                                           noise[static_cast<std::size_t>(b.antenna_b)] *
                                               noise[static_cast<std::size_t>(b.antenna_b)]));
    EXPECT_LT(b.rms_after_deg, 1.5 * floor_rad * 180.0 / std::numbers::pi)
        << b.antenna_a << "-" << b.antenna_b;
    EXPECT_GT(b.coherence_after, b.coherence_before);
  }
}

// A 3 mm night whose sky's water continuum is `continuum_scale` times the retrieval's model.
Solved solve_mis_scaled(double continuum_scale, std::uint64_t seed = 23) {
  Solved s;
  s.scenario = parse_scenario(night_text(230.0, ""), "test.toml", test::testdata(""));
  s.scenario.seed = seed;
  s.scenario.pwv_mm = 3.0;
  s.scenario.true_sky.water_continuum_scale = continuum_scale;
  s.night = simulate_night(s.scenario);
  s.retrieval = retrieve_night(s.night, s.scenario.site.parameters);
  s.coefficients = CoefficientWindows::from_retrieval(s.retrieval);
  s.paths = compute_wvr_paths(s.night, s.coefficients);
  s.factor = site_phase_per_path(s.scenario.site.parameters);
  s.calibration = solve_scaling(s.night, s.paths, s.factor);
  return s;
}

TEST(Calibration, RecoversTheScaleOfAMisScaledSky) {
  // A continuum 50 % stronger than the model's moves the scale the radiometer paths need from
  // 0.994-0.998 to 0.927-0.930 (seeds 23-28, DISABLED_MisScaledSkySpreadOverSeeds). Over
  // those seeds solved / needed was 0.99936-1.00055 on matched and mis-scaled skies alike
  // (mean 0.99985, standard deviation 0.00043); allowed 3 sigma plus the mean offset, 0.15 %.
  // A solve that ignored the mismatch (the matched scale) would be 7 % off.
  const Solved matched = solve_mis_scaled(1.0);
  const Solved mis = solve_mis_scaled(1.5);
  ASSERT_TRUE(mis.calibration.ok()) << mis.calibration.brief_report();
  const double needed = true_scale(mis);
  EXPECT_NEAR(mis.calibration.scale / needed, 1.0, 0.0015);
  EXPECT_NEAR(matched.calibration.scale / true_scale(matched), 1.0, 0.0015);
  // The mis-scale is real: the needed scale moved by far more than the tolerance.
  EXPECT_GT(std::abs(needed / true_scale(matched) - 1.0), 0.05);
  std::cout << "needed scale: matched sky " << true_scale(matched) << ", stronger continuum "
            << needed << "; solved " << matched.calibration.scale << " and "
            << mis.calibration.scale << "\n";
}

// Spread of the solved scale over the needed one across seeds, and how far the needed scale
// moves with the continuum (run with --gtest_also_run_disabled_tests).
TEST(Calibration, DISABLED_MisScaledSkySpreadOverSeeds) {
  for (std::uint64_t seed = 23; seed < 29; ++seed) {
    for (double continuum : {1.0, 1.5}) {
      const Solved s = solve_mis_scaled(continuum, seed);
      std::cout << "seed " << seed << " continuum " << continuum << ": needed " << true_scale(s)
                << " solved " << s.calibration.scale << " ratio "
                << s.calibration.scale / true_scale(s) << "\n";
    }
  }
}

TEST(Calibration, SubmillimetreNightSolvesToTheSameScale) {
  const Solved low = solve(230.0);
  const Solved high = solve(650.0);
  ASSERT_TRUE(high.calibration.ok()) << high.calibration.brief_report();
  EXPECT_NEAR(high.calibration.scale, low.calibration.scale, 0.02 * low.calibration.scale);
  // The uncorrected 650 GHz phase wraps: rms before is large, after is small.
  EXPECT_GT(high.metrics.phase_rms_before_deg, 40.0);
  EXPECT_GT(high.metrics.improvement_factor, 3.0);
}

TEST(Calibration, DryTurbulenceRemainsAfterCorrection) {
  const Solved s = solve(230.0, R"(
[[turbulence]]
kind = "dry"
height_m = 300.0
thickness_m = 300.0
outer_scale_m = 3000.0
wind_east_m_s = 6.0
wind_north_m_s = -1.0
path_rms_um = 120.0
)");
  ASSERT_TRUE(s.calibration.ok());
  // Expected residual: the dry path's phase scatter within scans plus the noise floor.
  const std::size_t nt = s.night.time_count();
  const double k = 2.0 * std::numbers::pi * 230e9 / constants::speed_of_light_m_per_s;
  double sum2 = 0.0;
  std::size_t n = 0;
  for (const Scan& scan : s.night.scans) {
    if (scan.intent != ScanIntent::kCalibrator) continue;
    for (std::size_t b = 1; b < s.night.antenna_count(); ++b) {
      std::vector<double> dry;
      for (std::size_t t = static_cast<std::size_t>(scan.start_s);
           t < std::min<std::size_t>(nt, static_cast<std::size_t>(scan.stop_s)); ++t) {
        dry.push_back(k * (s.night.truth->dry_path_m[b * nt + t] - s.night.truth->dry_path_m[t]));
      }
      double mean = 0.0;
      for (double d : dry) mean += d;
      mean /= static_cast<double>(dry.size());
      for (double d : dry) sum2 += (d - mean) * (d - mean);
      n += dry.size();
    }
  }
  const double dry_rms = std::sqrt(sum2 / static_cast<double>(n));
  const double thermal = 2.0 * std::numbers::pi / 180.0;
  double after2 = 0.0;
  for (const BaselineMetrics& b : s.metrics.baselines) {
    const double r = b.rms_after_deg * std::numbers::pi / 180.0;
    after2 += r * r;
  }
  const double after_rms = std::sqrt(after2 / static_cast<double>(s.metrics.baselines.size()));
  const double expected = std::sqrt(dry_rms * dry_rms + thermal * thermal);
  EXPECT_NEAR(after_rms / expected, 1.0, 0.2)
      << "after " << after_rms << " rad, dry truth " << dry_rms << " rad";
  EXPECT_GT(dry_rms, 3.0 * thermal);  // the dry part dominates the residual
}

TEST(Calibration, StreamingCorrectorIsBitIdenticalToTheOfflinePath) {
  const Solved s = solve(230.0);
  const PhaseCorrections offline = compute_phase_corrections(
      s.night, s.coefficients, s.calibration.antenna_scale, 230.0, s.factor(230.0));
  const std::size_t na = s.night.antenna_count(), nt = s.night.time_count(),
                    nc = s.night.channel_count();
  CorrectorConfig config;
  config.antennas = na;
  config.channels = nc;
  config.obs_freq_ghz = 230.0;
  config.phase_per_path = s.factor(230.0);
  std::size_t window = 0;
  StreamingCorrector live(
      config, s.coefficients.corrector_coefficients(window, s.calibration.antenna_scale));
  std::vector<double> tb(na * nc), path(na), phase(na);
  std::vector<std::uint8_t> valid(na), flags(na);
  for (std::size_t k = 0; k < nt; ++k) {
    const std::size_t w = s.coefficients.window_at(s.night.radiometer.time_s[k]);
    if (w != window) {
      window = w;
      live.update_coefficients(
          s.coefficients.corrector_coefficients(window, s.calibration.antenna_scale));
    }
    for (std::size_t a = 0; a < na; ++a) {
      valid[a] = s.night.radiometer.valid[a * nt + k];
      for (std::size_t c = 0; c < nc; ++c)
        tb[a * nc + c] = s.night.radiometer.brightness_k[(a * nt + k) * nc + c];
    }
    ASSERT_EQ(live.process(tb, valid, path, phase, flags), CorrectorStatus::kOk);
    for (std::size_t a = 0; a < na; ++a) {
      ASSERT_EQ(std::memcmp(&phase[a], &offline.phase_correction_rad[a * nt + k], sizeof(double)),
                0)
          << a << " " << k;
    }
  }
  // Corrections at visibility timestamps between samples interpolate linearly.
  const std::vector<double> times = {10.5, 100.25};
  const std::vector<double> at = interpolate_corrections(offline, times);
  EXPECT_NEAR(
      at[1 * 2 + 0],
      0.5 * (offline.phase_correction_rad[1 * nt + 10] + offline.phase_correction_rad[1 * nt + 11]),
      1e-12);
}

TEST(Calibration, BadInputIsSkippedOrReported) {
  Solved s = solve(230.0);
  Night night = s.night;
  // Unknown antennas and NaN phases are skipped.
  night.calibrator_phases.antenna_pair[0] = {0, 99};
  night.calibrator_phases.phase_rad[1] = std::nan("");
  // An antenna whose radiometer is dead everywhere.
  const std::size_t nt = night.time_count();
  AntennaPaths paths = s.paths;
  for (std::size_t k = 0; k < nt; ++k) paths.path_mm[5 * nt + k] = std::nan("");
  const CalibrationResult c = solve_scaling(night, paths, s.factor);
  ASSERT_TRUE(c.ok());
  EXPECT_GE(c.rows_skipped, 2u + nt / 2);
  EXPECT_NEAR(c.scale, s.calibration.scale, 0.02);
  // No calibrator scans: a status, not a crash.
  Night no_scans = s.night;
  no_scans.scans.clear();
  const CalibrationResult empty = solve_scaling(no_scans, s.paths, s.factor);
  EXPECT_EQ(empty.status, CalibrationStatus::kNoData);
  EXPECT_NE(empty.message.find("no calibrator scans"), std::string::npos);
  // Mismatched shapes and bad options throw.
  AntennaPaths short_paths = s.paths;
  short_paths.antennas = 3;
  EXPECT_THROW(solve_scaling(s.night, short_paths, s.factor), InvalidInput);
  CalibrationOptions bad;
  bad.reference_antenna = 50;
  EXPECT_THROW(solve_scaling(s.night, s.paths, s.factor, bad), InvalidInput);
}

// The default scaling, chosen by the data: one scale for the array on a night whose radiometers
// agree (this night has no gain errors; measured statistic 11.7 against the threshold 61.2),
// one per antenna when one radiometer's path is 10 % low (measured 1131 against 61.2).
TEST(Calibration, TheDataKeepOneScaleWhenTheRadiometersAgree) {
  const Solved s = solve(230.0);
  ASSERT_TRUE(s.calibration.ok());
  ASSERT_TRUE(std::isfinite(s.calibration.antenna_scale_statistic));
  EXPECT_LT(s.calibration.antenna_scale_statistic, s.calibration.antenna_scale_threshold);
  EXPECT_FALSE(s.calibration.per_antenna_scale);
  for (double scale : s.calibration.antenna_scale) EXPECT_EQ(scale, s.calibration.scale);
}

TEST(Calibration, TheDataChooseAScalePerAntennaWhenOneRadiometerReadsLow) {
  Solved s = solve(230.0);
  const std::size_t nt = s.paths.time_s.size();
  for (std::size_t k = 0; k < nt; ++k) s.paths.path_mm[3 * nt + k] /= 1.1;
  const CalibrationResult chosen = solve_scaling(s.night, s.paths, s.factor);
  ASSERT_TRUE(chosen.ok());
  EXPECT_GT(chosen.antenna_scale_statistic, chosen.antenna_scale_threshold);
  EXPECT_TRUE(chosen.per_antenna_scale);
  // Measured 1.066: the prior N(array scale, 0.1) pulls the antenna towards the array.
  EXPECT_NEAR(chosen.antenna_scale[3] / chosen.scale, 1.1, 0.05);
  // Forced to one scale: no test, and every antenna at the array scale.
  CalibrationOptions one;
  one.antenna_scaling = AntennaScaling::kOneForArray;
  const CalibrationResult forced = solve_scaling(s.night, s.paths, s.factor, one);
  EXPECT_FALSE(forced.per_antenna_scale);
  EXPECT_TRUE(std::isnan(forced.antenna_scale_statistic));
  EXPECT_EQ(forced.antenna_scale[3], forced.scale);
}

TEST(Calibration, PerAntennaScalesStayNearTheArrayScale) {
  CalibrationOptions options;
  options.antenna_scaling = AntennaScaling::kPerAntenna;
  const Solved s = solve(230.0, "", options);
  ASSERT_TRUE(s.calibration.ok());
  for (std::size_t a = 0; a < s.night.antenna_count(); ++a) {
    EXPECT_NEAR(s.calibration.antenna_scale[a], s.calibration.scale, 0.05);
    EXPECT_GT(s.calibration.antenna_scale_sigma[a], 0.0);
  }
}

}  // namespace
}  // namespace wvr

namespace wvr {
namespace {

// The antenna-phase form against the baseline form on the same nights: with every baseline
// stored (redundant, reduced to antenna phases first) and with reference baselines only (fitted
// as they are in both forms).
TEST(Calibration, AntennaPhaseSolveEqualsTheBaselineSolve) {
  for (const double obs_freq_ghz : {230.0, 650.0}) {
    for (const bool all_baselines : {true, false}) {
      Solved s;
      s.scenario = parse_scenario(night_text(obs_freq_ghz, ""), "test.toml", test::testdata(""));
      s.scenario.observing.all_baselines = all_baselines;
      s.night = simulate_night(s.scenario);
      s.retrieval = retrieve_night(s.night, s.scenario.site.parameters);
      s.coefficients = CoefficientWindows::from_retrieval(s.retrieval);
      s.paths = compute_wvr_paths(s.night, s.coefficients);
      s.factor = site_phase_per_path(s.scenario.site.parameters);
      CalibrationOptions by_baseline;
      by_baseline.form = ScalingSolveForm::kBaselinePhases;
      const CalibrationResult baseline = solve_scaling(s.night, s.paths, s.factor, by_baseline);
      const CalibrationResult antenna = solve_scaling(s.night, s.paths, s.factor);
      ASSERT_TRUE(baseline.ok()) << baseline.brief_report();
      ASSERT_TRUE(antenna.ok()) << antenna.brief_report();
      const std::string where =
          std::to_string(obs_freq_ghz) +
          (all_baselines ? " GHz, all baselines" : " GHz, reference baselines");
      EXPECT_EQ(antenna.rows_used, baseline.rows_used) << where;
      if (all_baselines) {
        EXPECT_NEAR(antenna.scale, baseline.scale, 0.1 * baseline.scale_sigma) << where;
        EXPECT_NEAR(antenna.scale_sigma / baseline.scale_sigma, 1.0, 0.2) << where;
      } else {
        EXPECT_NEAR(antenna.scale, baseline.scale, 1e-9) << where;
        EXPECT_NEAR(antenna.scale_sigma, baseline.scale_sigma, 1e-9) << where;
      }
      std::cout << where << ": baseline form " << baseline.brief_report() << "\n  antenna form "
                << antenna.brief_report() << "\n";
    }
  }
}

}  // namespace
}  // namespace wvr

namespace wvr {
namespace {

// The rows are built in parts of whole integrations, one part per thread, and concatenated in
// time order: with every baseline of 16 antennas (216,000 phase rows, 3 parts on 3 threads)
// the solve is the same to the last bit on 1 and 3 threads.
TEST(Calibration, TheSolveDoesNotDependOnTheThreadCount) {
  std::string text = night_text(230.0, "");
  text.replace(text.find("duration_s = 1500.0"), 19, "duration_s = 3000.0");
  text.replace(text.find("antenna_count = 8"), 17, "antenna_count = 16");
  Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
  scenario.observing.all_baselines = true;
  const Night night = simulate_night(scenario);
  ASSERT_GT(night.calibrator_phases.time_s.size(), 3u << 16);
  const NightRetrieval retrieval = retrieve_night(night, scenario.site.parameters);
  const AntennaPaths paths =
      compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
  const PhasePerPath factor = site_phase_per_path(scenario.site.parameters);
  for (const ScalingSolveForm form :
       {ScalingSolveForm::kAntennaPhases, ScalingSolveForm::kBaselinePhases}) {
    CalibrationOptions one, three;
    one.form = three.form = form;
    one.threads = 1;
    three.threads = 3;
    const CalibrationResult a = solve_scaling(night, paths, factor, one);
    const CalibrationResult b = solve_scaling(night, paths, factor, three);
    ASSERT_TRUE(a.ok()) << a.brief_report();
    EXPECT_EQ(a.rows_used, b.rows_used);
    EXPECT_EQ(a.rows_skipped, b.rows_skipped);
    EXPECT_EQ(a.scale, b.scale);
    EXPECT_EQ(a.scale_sigma, b.scale_sigma);
    EXPECT_EQ(a.antenna_scale, b.antenna_scale);
    EXPECT_EQ(a.final_cost, b.final_cost);
    EXPECT_EQ(a.antenna_scale_statistic, b.antenna_scale_statistic);
  }
}

}  // namespace
}  // namespace wvr
