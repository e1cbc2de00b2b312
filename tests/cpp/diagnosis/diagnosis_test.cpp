// Night diagnosis on a simulated night with labelled episodes.
#include "wvr/diagnosis.hpp"

#include <gtest/gtest.h>

#include <cstring>
#include <iostream>
#include <map>

#include "sky_mismatch.hpp"
#include "test_util.hpp"
#include "verdict_score.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

const std::string kEpisodes = R"(
name = "diagnosis test night"
seed = 31
duration_s = 7200.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 10
radius_m = 1200.0
[atmosphere]
pwv_mm = 1.0
cloud_base_above_ground_m = 1000.0
cloud_thickness_m = 800.0
[source]
declination_deg = -40.0
start_hour_angle_h = -1.0
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
[[turbulence]]
kind = "dry"
height_m = 300.0
thickness_m = 300.0
outer_scale_m = 3000.0
wind_east_m_s = 6.0
wind_north_m_s = -1.0
path_rms_um = 150.0
schedule = [[0.0, 0.0], [3000.0, 0.0], [3001.0, 1.0], [4200.0, 1.0], [4201.0, 0.0]]
label = "dry turbulence"
[[clouds]]
start_s = 1200.0
stop_s = 2000.0
liquid_water_path_kg_m2 = 0.1
ramp_s = 30.0
[[faults]]
antenna = 3
kind = "spike"
start_s = 4800.0
stop_s = 5600.0
magnitude = 8.0
[[faults]]
antenna = 5
kind = "stuck_channel"
channel = 2
start_s = 6000.0
stop_s = 6800.0
)";

struct Diagnosed {
  Night night;
  NightDiagnosis diagnosis;
};

// Simulates the scenario, optionally makes its sky differ from the model, and runs the chain,
// judging the scans on `threads` threads.
Diagnosed diagnose(const std::string& text,
                   const test::SkyMismatch* mismatch = nullptr,
                   int threads = 0) {
  const Scenario s = parse_scenario(text, "test.toml", test::testdata(""));
  Diagnosed out;
  out.night = simulate_night(s);
  if (mismatch != nullptr) test::add_sky_mismatch(out.night, *mismatch);
  const NightRetrieval retrieval = retrieve_night(out.night, s.site.parameters);
  const CoefficientWindows coefficients = CoefficientWindows::from_retrieval(retrieval);
  const AntennaPaths paths = compute_wvr_paths(out.night, coefficients);
  const PhasePerPath factor = site_phase_per_path(s.site.parameters);
  const CalibrationResult calibration = solve_scaling(out.night, paths, factor);
  const CorrectionMetrics metrics =
      evaluate_correction(out.night, paths, calibration.antenna_scale, factor);
  out.diagnosis = diagnose_night(out.night, retrieval, paths, metrics, factor, {}, threads);
  return out;
}

// The same number to the last bit (NaN equals NaN).
bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

void expect_verdicts_match_episodes(const Diagnosed& d, const std::string& title) {
  std::vector<std::string> misses;
  const test::VerdictScores scores = test::score_verdicts(d.night, d.diagnosis, &misses);
  test::print_scores(std::cout, title, scores);
  for (const std::string& line : misses) std::cout << title << ": " << line << "\n";
  for (const char* label : {"corrected", "cloud", "dry turbulence", "radiometer fault"}) {
    const test::ClassScore& s = scores.at(label);
    EXPECT_GE(s.actual, 10) << title << ": " << label;
    EXPECT_GE(s.precision(), 0.9) << title << ": " << label;
    EXPECT_GE(s.recall(), 0.9) << title << ": " << label;
  }
}

TEST(Diagnosis, VerdictsMatchTheSimulatedEpisodes) {
  expect_verdicts_match_episodes(diagnose(kEpisodes), "matched sky");
}

TEST(Diagnosis, VerdictsMatchTheEpisodesOnASkyTheModelDidNotMake) {
  // Offsets of 1-2 K and gains of 2-5 % per antenna and channel, and a systematic pattern:
  // hundreds of times the thermal noise in chi-square, and still no cloud outside the cloud.
  const test::SkyMismatch mismatch;
  const Diagnosed d = diagnose(kEpisodes, &mismatch);
  expect_verdicts_match_episodes(d, "mismatched sky");
  const RadiometerFloor& floor = d.diagnosis.radiometer_floor;
  std::cout << floor.describe() << "\n";
  EXPECT_GT(floor.chi2_per_dof_thermal, 20.0);  // thermal noise alone would call it all cloud
  EXPECT_LT(floor.chi2_per_dof_floor, 2.0);
}

TEST(Diagnosis, TheVerdictsDoNotDependOnTheThreadCount) {
  const test::SkyMismatch mismatch;
  const Diagnosed one = diagnose(kEpisodes, &mismatch, 1);
  const NightDiagnosis three =
      diagnose(kEpisodes, &mismatch, 3).diagnosis;  // the same simulated night (fixed seed)
  ASSERT_EQ(one.diagnosis.windows.size(), three.windows.size());
  ASSERT_GE(three.windows.size(), 3u);
  for (std::size_t i = 0; i < three.windows.size(); ++i) {
    const WindowDiagnosis &a = one.diagnosis.windows[i], &b = three.windows[i];
    EXPECT_EQ(a.verdict, b.verdict) << i;
    EXPECT_EQ(a.reason, b.reason) << i;
    EXPECT_EQ(a.inherited, b.inherited) << i;
    EXPECT_EQ(a.antenna_faults, b.antenna_faults) << i;
    for (auto member :
         {&WindowDiagnosis::rms_before_deg, &WindowDiagnosis::rms_after_deg,
          &WindowDiagnosis::floor_deg, &WindowDiagnosis::correlation, &WindowDiagnosis::slope,
          &WindowDiagnosis::chi2_per_dof, &WindowDiagnosis::radiometer_path_rms_um}) {
      EXPECT_TRUE(same_bits(a.*member, b.*member)) << i << ": " << a.*member << " " << b.*member;
    }
  }
}

TEST(Diagnosis, OneSickRadiometerFlagsItsAntennaNotTheArray) {
  const Diagnosed d = diagnose(kEpisodes);
  int inside = 0;
  for (const WindowDiagnosis& w : d.diagnosis.windows) {
    if (w.start_s < 4800.0 || w.stop_s > 5600.0) continue;  // antenna 3's spikes
    ++inside;
    EXPECT_NE(w.verdict, Verdict::kRadiometerFault) << w.start_s << ": " << w.reason;
    EXPECT_NE(w.antenna_faults[3], 0) << w.start_s << ": " << w.reason;
  }
  EXPECT_GE(inside, 5);
}

TEST(Diagnosis, AScaleTwentyPerCentOffIsReadAsScaleOffNotDryTurbulence) {
  // The episode night corrected with every antenna's solved scale times 0.8: a fifth of the
  // wet phase is left, proportional to the radiometer prediction. Rescaled per baseline it
  // falls to the noise floor, so the calibrator windows the truth calls corrected read scale off.
  const Scenario s = parse_scenario(kEpisodes, "test.toml", test::testdata(""));
  const Night night = simulate_night(s);
  const NightRetrieval retrieval = retrieve_night(night, s.site.parameters);
  const AntennaPaths paths =
      compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
  const PhasePerPath factor = site_phase_per_path(s.site.parameters);
  std::vector<double> scale = solve_scaling(night, paths, factor).antenna_scale;
  for (double& v : scale) v *= 0.8;
  const CorrectionMetrics metrics = evaluate_correction(night, paths, scale, factor);
  const NightDiagnosis diagnosis = diagnose_night(night, retrieval, paths, metrics, factor);
  int judged = 0, scale_off = 0;
  for (const WindowDiagnosis& w : diagnosis.windows) {
    const bool clear = w.start_s >= 2100.0 && w.stop_s <= 2900.0;  // no episode
    if (!w.calibrator || !clear) continue;
    ++judged;
    scale_off += w.verdict == Verdict::kScaleOff;
    EXPECT_NE(w.verdict, Verdict::kDryTurbulence) << w.start_s << ": " << w.reason;
  }
  EXPECT_GE(judged, 5);
  EXPECT_GE(scale_off, judged - 1);
}

TEST(Diagnosis, ResultGroupAndReasons) {
  const Diagnosed d = diagnose(kEpisodes);
  const ResultGroup g = diagnosis_result_group(d.diagnosis);
  ASSERT_NE(g.find("verdict"), nullptr);
  EXPECT_EQ(g.find("antenna_faults")->shape,
            (std::vector<std::size_t>{10, d.diagnosis.windows.size()}));
  for (const WindowDiagnosis& w : d.diagnosis.windows) EXPECT_FALSE(w.reason.empty());
  EXPECT_EQ(describe_antenna_faults(kFaultSpikes | kFaultStuckChannel), "stuck channel, spikes");
}

TEST(Diagnosis, NightsThatCannotBeJudgedSaySo) {
  // No calibrator scans: every window lacks phases.
  std::string text = kEpisodes;
  text.replace(text.find("calibrator_scan_s = 30.0"), 24, "calibrator_scan_s = 1.0");
  Diagnosed d = diagnose(text);
  Night night = d.night;
  night.scans.clear();
  night.calibrator_phases = {};
  const Scenario s = parse_scenario(kEpisodes, "test.toml", test::testdata(""));
  const NightRetrieval retrieval = retrieve_night(night, s.site.parameters);
  const AntennaPaths paths =
      compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
  const PhasePerPath one = PhasePerPath::non_dispersive();
  const CorrectionMetrics metrics = evaluate_correction(night, paths, {}, one);
  const NightDiagnosis empty = diagnose_night(night, retrieval, paths, metrics, one);
  EXPECT_TRUE(empty.windows.empty());
  ASSERT_FALSE(empty.notes.empty());
  EXPECT_NE(empty.notes[0].find("no calibrator phases"), std::string::npos);
}

TEST(Diagnosis, CorrectionIsUsableWhereItWorkedOrHadNothingToRemove) {
  const std::map<Verdict, bool> usable = {
      {Verdict::kCorrected, true},        {Verdict::kQuietSky, true},
      {Verdict::kDryTurbulence, false},   {Verdict::kCloud, false},
      {Verdict::kRadiometerFault, false}, {Verdict::kScaleOff, false},
      {Verdict::kCannotJudge, false}};
  for (const auto& [verdict, expected] : usable)
    EXPECT_EQ(correction_usable(verdict), expected) << to_string(verdict);
}

}  // namespace
}  // namespace wvr
