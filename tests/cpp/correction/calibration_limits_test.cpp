// Scaling solve at its limits: segments shorter than the calibrator cycle, and too few rows to
// determine anything.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

// Calibrator scans of 60 s every 150 s over 600 s of a small array.
struct ShortNight {
  Scenario scenario;
  Night night;
  AntennaPaths paths;
  PhasePerPath factor;
};

const ShortNight& short_night() {
  static const ShortNight s = [] {
    ShortNight n;
    n.scenario = parse_scenario(R"(
name = "calibration limits night"
seed = 5
duration_s = 600.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 4
radius_m = 800.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -40.0
start_hour_angle_h = -1.0
[observing]
calibrator_scan_s = 60.0
target_scan_s = 90.0
thermal_phase_noise_deg = 2.0
obs_freq_ghz = 230.0
[[turbulence]]
kind = "wet"
height_m = 700.0
thickness_m = 800.0
outer_scale_m = 5000.0
wind_east_m_s = 9.0
wind_north_m_s = 2.0
path_rms_um = 400.0
)",
                                "limits.toml", test::testdata(""));
    n.night = simulate_night(n.scenario);
    const NightRetrieval retrieval = retrieve_night(n.night, n.scenario.site.parameters);
    n.paths = compute_wvr_paths(n.night, CoefficientWindows::from_retrieval(retrieval));
    n.factor = site_phase_per_path(n.scenario.site.parameters);
    return n;
  }();
  return s;
}

TEST(CalibrationLimits, SegmentsShorterThanTheCalibratorCycleSkipTheEmptyOnes) {
  const ShortNight& s = short_night();
  CalibrationOptions options;
  options.segment_s = 30.0;  // most 30 s segments fall within target scans
  const CalibrationResult c = solve_scaling(s.night, s.paths, s.factor, options);
  ASSERT_TRUE(c.ok()) << c.brief_report();
  ASSERT_FALSE(c.segment_scale.empty());
  ASSERT_EQ(c.segment_start_s.size(), c.segment_scale.size());
  ASSERT_EQ(c.segment_scale_sigma.size(), c.segment_scale.size());
  // Every reported segment overlaps a calibrator scan, in time order.
  for (std::size_t k = 0; k < c.segment_start_s.size(); ++k) {
    const double start = c.segment_start_s[k];
    if (k > 0) {
      EXPECT_GT(start, c.segment_start_s[k - 1]);
    }
    bool overlaps = false;
    for (const Scan& scan : s.night.scans) {
      if (scan.intent == ScanIntent::kCalibrator && scan.start_s < start + 30.0 &&
          scan.stop_s > start)
        overlaps = true;
    }
    EXPECT_TRUE(overlaps) << "segment at " << start << " s has no calibrator scan";
    EXPECT_TRUE(std::isfinite(c.segment_scale[k]));
  }
}

TEST(CalibrationLimits, TooFewRowsAreRefusedNotConverged) {
  const ShortNight& s = short_night();
  for (std::size_t kept : {1u, 2u}) {
    Night night = s.night;
    CalibratorPhases& cp = night.calibrator_phases;
    // Keep the first `kept` rows of the first calibrator scan.
    cp.time_s.resize(kept);
    cp.antenna_pair.resize(kept);
    cp.phase_rad.resize(kept);
    cp.freq_ghz.resize(kept);
    const CalibrationResult c = solve_scaling(night, s.paths, s.factor);
    EXPECT_FALSE(c.ok()) << kept << " rows: " << c.brief_report();
    EXPECT_EQ(c.status, CalibrationStatus::kNoData);
    EXPECT_NE(c.message.find("cannot determine"), std::string::npos) << c.message;
  }
}

}  // namespace
}  // namespace wvr
