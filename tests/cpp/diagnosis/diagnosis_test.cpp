// Night diagnosis on a simulated night with labelled episodes.
#include "wvr/diagnosis.hpp"

#include <gtest/gtest.h>

#include <iostream>
#include <map>

#include "test_util.hpp"
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

Diagnosed diagnose(const std::string& text) {
  const Scenario s = parse_scenario(text, "test.toml", test::testdata(""));
  Diagnosed out;
  out.night = simulate_night(s);
  const NightRetrieval retrieval = retrieve_night(out.night, s.site.parameters);
  const CoefficientWindows coefficients = CoefficientWindows::from_retrieval(retrieval);
  const AntennaPaths paths = compute_wvr_paths(out.night, coefficients);
  const PhasePerPath factor = site_phase_per_path(s.site.parameters);
  const CalibrationResult calibration = solve_scaling(out.night, paths, factor);
  const CorrectionMetrics metrics =
      evaluate_correction(out.night, paths, calibration.antenna_scale, factor);
  out.diagnosis = diagnose_night(out.night, retrieval, paths, metrics, factor);
  return out;
}

// The truth label of a window, or "" when it straddles an episode edge (not scored).
std::string truth_label(const Night& night, const WindowDiagnosis& w, std::vector<int>& faulty) {
  std::string label = "corrected";
  for (const TruthEpisode& e : night.truth->episodes) {
    const bool overlaps = w.start_s < e.stop_s && w.stop_s > e.start_s;
    if (!overlaps) continue;
    const bool inside = w.start_s >= e.start_s && w.stop_s <= e.stop_s;
    if (!inside) return "";
    if (e.label == "cloud") return "cloud";
    if (e.label == "dry turbulence") label = "dry turbulence";
    if (e.label.rfind("radiometer fault", 0) == 0) {
      faulty.push_back(e.antenna);
      if (label == "corrected") label = "radiometer fault";
    }
  }
  return label;
}

TEST(Diagnosis, VerdictsMatchTheSimulatedEpisodes) {
  const Diagnosed d = diagnose(kEpisodes);
  std::map<std::string, int> true_positive, predicted, actual;
  int faulty_named = 0, faulty_windows = 0;
  for (const WindowDiagnosis& w : d.diagnosis.windows) {
    std::vector<int> faulty;
    const std::string truth = truth_label(d.night, w, faulty);
    if (truth.empty()) continue;
    const std::string verdict = to_string(w.verdict);
    ++actual[truth];
    ++predicted[verdict];
    if (truth == verdict) ++true_positive[truth];
    if (truth == "radiometer fault") {
      ++faulty_windows;
      bool named = true;
      for (int a : faulty) named = named && w.antenna_faults[static_cast<std::size_t>(a)] != 0;
      faulty_named += named;
    }
  }
  for (const char* label : {"corrected", "cloud", "dry turbulence", "radiometer fault"}) {
    const double recall =
        actual[label] ? static_cast<double>(true_positive[label]) / actual[label] : 1.0;
    const double precision =
        predicted[label] ? static_cast<double>(true_positive[label]) / predicted[label] : 1.0;
    std::cout << label << ": windows " << actual[label] << ", predicted " << predicted[label]
              << ", precision " << precision << ", recall " << recall << "\n";
    EXPECT_GE(actual[label], 10) << label;
    EXPECT_GE(precision, 0.9) << label;
    EXPECT_GE(recall, 0.9) << label;
  }
  EXPECT_GE(faulty_named, static_cast<int>(0.9 * faulty_windows));
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

}  // namespace
}  // namespace wvr
