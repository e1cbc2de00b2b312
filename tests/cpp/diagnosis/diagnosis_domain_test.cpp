// Scans outside the retrieval's domain (the source set below the PWV table's elevation limit)
// are said to be so, not blamed on the radiometers.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

// Half an hour on a setting source: at latitude -24 deg (the demo site) a source at declination
// -40 deg starting 5.9 h west of the meridian sets from about 16 deg to 11 deg, through the PWV
// table's 14 deg limit after about 740 s.
const std::string kSettingSource = R"(
name = "setting source"
seed = 7
duration_s = 1800.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 6
radius_m = 800.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -40.0
start_hour_angle_h = 5.9
[observing]
calibrator_scan_s = 30.0
target_scan_s = 90.0
thermal_phase_noise_deg = 2.0
[[turbulence]]
kind = "wet"
height_m = 700.0
thickness_m = 800.0
outer_scale_m = 5000.0
wind_east_m_s = 9.0
wind_north_m_s = 2.0
path_rms_um = 300.0
)";

struct Chain {
  Night night;
  NightRetrieval retrieval;
  AntennaPaths paths;
  CorrectionMetrics metrics;
  PhasePerPath factor = PhasePerPath::non_dispersive();
};

Chain run_chain() {
  const Scenario s = parse_scenario(kSettingSource, "test.toml", test::testdata(""));
  Chain c;
  c.night = simulate_night(s);
  c.retrieval = retrieve_night(c.night, s.site.parameters);
  c.paths = compute_wvr_paths(c.night, CoefficientWindows::from_retrieval(c.retrieval));
  c.factor = site_phase_per_path(s.site.parameters);
  const CalibrationResult calibration = solve_scaling(c.night, c.paths, c.factor);
  c.metrics = evaluate_correction(c.night, c.paths, calibration.antenna_scale, c.factor);
  return c;
}

const Chain& chain() {
  static const Chain c = run_chain();
  return c;
}

// Highest elevation of any antenna in [start_s, stop_s).
double highest_elevation_deg(const Night& night, double start_s, double stop_s) {
  const std::size_t nt = night.time_count();
  double highest = -90.0;
  for (std::size_t a = 0; a < night.antenna_count(); ++a) {
    for (std::size_t k = 0; k < nt; ++k) {
      const double t = night.radiometer.time_s[k];
      if (t >= start_s && t < stop_s)
        highest = std::max(highest, night.pointing.elevation_deg[a * nt + k]);
    }
  }
  return highest;
}

bool mentions(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

TEST(DiagnosisOutsideDomain, ScansBelowTheElevationLimitAreNotRadiometerFaults) {
  const Chain& c = chain();
  const NightDiagnosis d = diagnose_night(c.night, c.retrieval, c.paths, c.metrics, c.factor);
  const double limit_deg = PwvTableOptions{}.min_elevation_deg;
  int below = 0, above = 0;
  for (const WindowDiagnosis& w : d.windows) {
    const std::string where = std::to_string(w.start_s) + " s: " + w.reason;
    EXPECT_NE(w.verdict, Verdict::kRadiometerFault) << where;
    for (std::uint8_t faults : w.antenna_faults) EXPECT_EQ(faults & kFaultNoData, 0) << where;
    EXPECT_FALSE(mentions(w.reason, "no data")) << where;
    if (highest_elevation_deg(c.night, w.start_s, w.stop_s) < limit_deg) {
      ++below;
      EXPECT_EQ(w.verdict, Verdict::kOutsideDomain) << where;
      EXPECT_FALSE(correction_usable(w.verdict));
      EXPECT_TRUE(mentions(w.reason, "source below the retrieval's 14 deg elevation limit"))
          << where;
      EXPECT_TRUE(mentions(w.reason, "in 100 % of the samples")) << where;
    } else if (w.start_s + 1.0 < 700.0) {  // wholly above the limit
      ++above;
      EXPECT_NE(w.verdict, Verdict::kOutsideDomain) << where;
      EXPECT_FALSE(mentions(w.reason, "elevation limit")) << where;
    } else {  // the scan the source sets in: judged on what remains, or said to be outside
      EXPECT_TRUE(mentions(w.reason, "elevation limit")) << where;
    }
  }
  EXPECT_GE(below, 12);
  EXPECT_GE(above, 10);
  // The verdict survives the result group (a code after the older ones).
  const NightDiagnosis stored =
      diagnosis_from_result_group(diagnosis_result_group(d), c.night.array.antenna_names, "test");
  ASSERT_EQ(stored.windows.size(), d.windows.size());
  EXPECT_EQ(stored.windows.back().verdict, Verdict::kOutsideDomain);
}

TEST(DiagnosisOutsideDomain, ARetrievalWithoutTheElevationBitNamesEveryPossibleCause) {
  // Retrievals stored before the elevation bit and limit were recorded.
  const Chain& c = chain();
  NightRetrieval older = c.retrieval;
  for (std::uint8_t& f : older.flags) f &= static_cast<std::uint8_t>(~kFlagElevationOutOfDomain);
  older.table_min_elevation_deg = std::nan("");
  const NightDiagnosis d = diagnose_night(c.night, older, c.paths, c.metrics, c.factor);
  const WindowDiagnosis& last = d.windows.back();
  EXPECT_EQ(last.verdict, Verdict::kOutsideDomain) << last.reason;
  EXPECT_TRUE(mentions(last.reason,
                       "elevation, surface temperature or PWV outside the "
                       "retrieval's table"))
      << last.reason;
}

TEST(DiagnosisOutsideDomain, SamplesTheFileMarksInvalidStayNoData) {
  // Antenna 2's samples marked invalid over the first scans, above the limit: a real dropout.
  const Chain& c = chain();
  NightRetrieval dropout = c.retrieval;
  const std::size_t nt = c.night.time_count();
  for (std::size_t k = 0; k < nt && c.night.radiometer.time_s[k] < 240.0; ++k)
    dropout.flags[2 * nt + k] |= kFlagInvalidInFile;
  const NightDiagnosis d = diagnose_night(c.night, dropout, c.paths, c.metrics, c.factor);
  ASSERT_LT(d.windows.front().stop_s, 240.0);
  EXPECT_EQ(d.windows.front().antenna_faults[2] & kFaultNoData, kFaultNoData)
      << d.windows.front().reason;
  EXPECT_TRUE(mentions(d.windows.front().reason, "(no data)")) << d.windows.front().reason;
  EXPECT_EQ(d.windows.back().verdict, Verdict::kOutsideDomain) << d.windows.back().reason;
}

TEST(DiagnosisOutsideDomain, TurbulenceLeavesTheScansOutsideTheDomainOut) {
  // The coefficient window the source sets in still gives paths a little below the limit.
  const Chain& c = chain();
  const NightDiagnosis d = diagnose_night(c.night, c.retrieval, c.paths, c.metrics, c.factor);
  const AntennaPaths clean = paths_for_turbulence(c.night, c.paths, d);
  const std::size_t nt = c.paths.time_s.size();
  std::size_t measured = 0, kept = 0;
  for (const WindowDiagnosis& w : d.windows) {
    if (w.verdict != Verdict::kOutsideDomain) continue;
    for (std::size_t i = 0; i < c.paths.path_mm.size(); ++i) {
      const double t = c.paths.time_s[i % nt];
      if (t < w.start_s || t >= w.stop_s) continue;
      measured += std::isfinite(c.paths.path_mm[i]);
      kept += std::isfinite(clean.path_mm[i]);
    }
  }
  EXPECT_GT(measured, 0u);
  EXPECT_EQ(kept, 0u);
}

}  // namespace
}  // namespace wvr
