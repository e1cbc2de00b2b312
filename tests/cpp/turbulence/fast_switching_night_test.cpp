// Fast-switching advice with radiometer correction on a simulated night: the residual
// structure function measured from corrected calibrator phases against the true residual path
// (the dry layer the radiometers cannot see), and the advice against switching directly on it.
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <numbers>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

// A wet layer the radiometers correct and a dry layer they cannot see; long calibrator scans
// so that lags reach ~1 km of flow.
std::string wet_and_dry_night() {
  return R"(
name = "fast switching night"
seed = 5
duration_s = 3600.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 12
radius_m = 1500.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -40.0
start_hour_angle_h = -1.0
[observing]
calibrator_scan_s = 300.0
target_scan_s = 60.0
thermal_phase_noise_deg = 0.5
obs_freq_ghz = 230.0
[[turbulence]]
kind = "wet"
height_m = 700.0
thickness_m = 800.0
outer_scale_m = 5000.0
wind_east_m_s = 9.0
wind_north_m_s = 2.0
path_rms_um = 400.0
[[turbulence]]
kind = "dry"
height_m = 700.0
thickness_m = 300.0
outer_scale_m = 3000.0
wind_east_m_s = 9.0
wind_north_m_s = 2.0
path_rms_um = 150.0
)";
}

struct CorrectedNight {
  Night night;
  CorrectionMetrics metrics;
};

CorrectedNight correct(const std::string& text) {
  const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
  CorrectedNight out;
  out.night = simulate_night(scenario);
  const NightRetrieval retrieval = retrieve_night(out.night, scenario.site.parameters);
  const AntennaPaths paths =
      compute_wvr_paths(out.night, CoefficientWindows::from_retrieval(retrieval));
  const PhasePerPath factor = site_phase_per_path(scenario.site.parameters);
  const CalibrationResult calibration = solve_scaling(out.night, paths, factor);
  out.metrics = evaluate_correction(out.night, paths, calibration.antenna_scale, factor);
  return out;
}

// Antenna-based D of the true dry path at a lag of k samples, over every antenna and time.
double true_dry_structure_m2(const Night& night, std::size_t k) {
  const std::size_t nt = night.time_count(), na = night.antenna_count();
  double sum = 0.0;
  std::size_t n = 0;
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t t = 0; t + k < nt; ++t) {
      const double d =
          night.truth->dry_path_m[a * nt + t + k] - night.truth->dry_path_m[a * nt + t];
      sum += d * d;
      ++n;
    }
  }
  return sum / static_cast<double>(n);
}

// Direct switching on the true residual: each antenna's dry path is calibrated at the start
// of every cycle and that value held over the cycle (target at the calibrator's position).
double direct_hold_residual_m(const Night& night, std::size_t cycle_samples) {
  const std::size_t nt = night.time_count(), na = night.antenna_count();
  double sum = 0.0;
  std::size_t n = 0;
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t t0 = 0; t0 + cycle_samples <= nt; t0 += cycle_samples) {
      for (std::size_t t = t0 + 1; t < t0 + cycle_samples; ++t) {
        const double d = night.truth->dry_path_m[a * nt + t] - night.truth->dry_path_m[a * nt + t0];
        sum += d * d;
        ++n;
      }
    }
  }
  return std::sqrt(sum / static_cast<double>(n));
}

TEST(FastSwitchingNight, CorrectedCalibratorPhasesGiveTheResidualStructureAndAdvice) {
  const CorrectedNight c = correct(wet_and_dry_night());
  const double speed = std::hypot(9.0, 2.0);
  const CalibratorTemporalResult after =
      calibrator_temporal_structure(c.night, c.metrics.corrected_phase_rad, speed);
  ASSERT_TRUE(after.ok()) << after.brief_report();
  std::cout << after.brief_report() << "\n";
  ASSERT_GE(after.lag_s.size(), 6u);
  EXPECT_GT(after.estimate.separation.back(), 300.0);
  for (std::size_t l = 0; l < after.lag_s.size(); ++l) {
    const double truth =
        true_dry_structure_m2(c.night, static_cast<std::size_t>(std::lround(after.lag_s[l])));
    std::cout << "lag " << after.lag_s[l] << " s (" << after.estimate.separation[l]
              << " m): measured " << after.estimate.value_m2[l] << " m^2, true dry " << truth
              << " m^2\n";
    // At 1 s the radiometer and thermal noise floors (~5e-11 m^2) are a third of the signal.
    if (after.lag_s[l] >= 2.0) {
      EXPECT_NEAR(after.estimate.value_m2[l] / truth, 1.0, 0.15);
    }
  }
  // The Holdaway rule on the measured residual against switching on the true residual.
  const BrokenPowerLawFit fit =
      fit_broken_power_law(after.estimate.separation, after.estimate.value_m2);
  ASSERT_TRUE(fit.ok()) << fit.brief_report();
  FastSwitchingInput input;
  input.uncorrected = PathStructureFunction::from_function(
      [fit](double d) { return d > 0.0 ? fit.evaluate_m2(d) : 0.0; });
  input.wind_speed_m_s = speed;
  input.layer_height_m = 700.0;
  input.calibrator_separation_deg = 0.0;  // the direct simulation calibrates in place
  input.freq_ghz = 230.0;
  input.report_cycle_times_s = {10.0, 20.0, 40.0, 80.0};
  const FastSwitchingAdvice advice = advise_fast_switching(input);
  const double k = 2.0 * std::numbers::pi * 230e9 / constants::speed_of_light_m_per_s;
  for (std::size_t i = 0; i < input.report_cycle_times_s.size(); ++i) {
    const double direct_deg =
        direct_hold_residual_m(
            c.night, static_cast<std::size_t>(std::lround(input.report_cycle_times_s[i]))) *
        k * 180.0 / std::numbers::pi;
    std::cout << "t_cyc " << input.report_cycle_times_s[i] << " s: rule "
              << advice.residual_uncorrected_deg[i] << " deg, direct " << direct_deg << " deg\n";
    EXPECT_NEAR(advice.residual_uncorrected_deg[i] / direct_deg, 1.0, 0.2);
  }
  // Uncorrected phases wrap at long lags: those lags are left out, not underestimated.
  const CalibratorTemporalResult before =
      calibrator_temporal_structure(c.night, c.night.calibrator_phases.phase_rad, speed);
  ASSERT_TRUE(before.ok()) << before.brief_report();
  EXPECT_LT(before.lag_s.size(), after.lag_s.size());
  EXPECT_NE(before.message.find("wrap"), std::string::npos);
}

TEST(FastSwitchingNight, CalibratorTemporalStructureRefusesBadInput) {
  const CorrectedNight c = correct(wet_and_dry_night());
  const std::vector<double> short_phases = {0.0, 1.0};
  EXPECT_THROW(calibrator_temporal_structure(c.night, short_phases, 9.0), InvalidInput);
  EXPECT_THROW(calibrator_temporal_structure(c.night, c.metrics.corrected_phase_rad, 0.0),
               InvalidInput);
  CalibratorTemporalOptions bad;
  bad.max_rms_phase_rad = 0.0;
  EXPECT_THROW(calibrator_temporal_structure(c.night, c.metrics.corrected_phase_rad, 9.0, bad),
               InvalidInput);
  Night no_scans = c.night;
  no_scans.scans.clear();
  const CalibratorTemporalResult none =
      calibrator_temporal_structure(no_scans, no_scans.calibrator_phases.phase_rad, 9.0);
  EXPECT_EQ(none.status, DiagnosticStatus::kNoData);
  EXPECT_NE(none.message.find("no calibrator scans"), std::string::npos);
}

}  // namespace
}  // namespace wvr
