// A night with one dead radiometer inside the array (testdata/scenarios/dead-radiometer.toml):
// the night pipeline predicts that antenna's path from the others, and its corrected
// calibrator phase comes close to its healthy neighbours'.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <iostream>

#include "test_util.hpp"
#include "wvr/night_processing.hpp"
#include "wvr/path_prediction.hpp"
#include "wvr/scenario.hpp"
#include "wvr/simulator.hpp"

namespace wvr {
namespace {

constexpr std::size_t kDead = 7;  // the scenario's dropout fault

const Night& dead_night() {
  static const Night night =
      simulate_night(load_scenario(test::testdata("scenarios/dead-radiometer.toml")));
  return night;
}

// The night with its retrieval and calibration stored, so that each method's run reuses them.
const Night& processed_night() {
  static const Night night = [] {
    Night n = dead_night();
    NightProcessingOptions options;
    options.last_stage = NightStage::kCalibration;
    options.path_prediction.enabled = false;
    for (ResultGroup& g : process_night(n, options).result_groups) n.results.push_back(g);
    return n;
  }();
  return night;
}

NightProcessingResult run(bool predict, PathPredictionMethod method) {
  NightProcessingOptions options;
  options.last_stage = NightStage::kCorrection;
  options.path_prediction.enabled = predict;
  options.path_prediction.method = method;
  return process_night(processed_night(), options);
}

// Median corrected calibrator phase rms of the dead antenna's four nearest antennas, other
// than the phase reference (antenna 0, whose rms pools every baseline).
double neighbour_rms_deg(const CorrectionMetrics& metrics) {
  const auto& p = dead_night().array.position_enu_m;
  std::vector<std::size_t> others;
  for (std::size_t a = 1; a < dead_night().antenna_count(); ++a)
    if (a != kDead) others.push_back(a);
  const auto distance = [&](std::size_t a) {
    return std::hypot(p[a][0] - p[kDead][0], p[a][1] - p[kDead][1]);
  };
  std::sort(others.begin(), others.end(),
            [&](std::size_t a, std::size_t b) { return distance(a) < distance(b); });
  std::vector<double> rms;
  for (std::size_t i = 0; i < 4; ++i) rms.push_back(metrics.antennas[others[i]].rms_after_deg);
  std::sort(rms.begin(), rms.end());
  return 0.5 * (rms[1] + rms[2]);
}

// rms of the predicted path's error against the simulator's true wet path over the night, about
// its mean (a constant is calibrated away), in mm.
double prediction_error_rms_mm(const PredictedPaths& predicted) {
  const Night& night = dead_night();
  const std::size_t nt = night.time_count();
  double mean = 0.0, sum2 = 0.0;
  std::vector<double> error;
  for (std::size_t k = 0; k < nt; ++k)
    error.push_back(predicted.paths.path_mm[kDead * nt + k] -
                    1e3 * night.truth->wet_path_m[kDead * nt + k]);
  for (const double e : error) mean += e / static_cast<double>(nt);
  for (const double e : error) sum2 += (e - mean) * (e - mean);
  return std::sqrt(sum2 / static_cast<double>(nt));
}

TEST(DeadRadiometer, WithoutPredictionTheAntennaStaysUncorrected) {
  const NightProcessingResult r = run(false, PathPredictionMethod::kFrozenFlow);
  EXPECT_FALSE(r.path_prediction.has_value());
  EXPECT_EQ(r.metrics->antennas[kDead].samples, 0u);
  const std::size_t nt = r.corrections->time_s.size();
  for (std::size_t k = 0; k < nt; ++k) {
    ASSERT_NE(r.corrections->flags[kDead * nt + k], 0) << k;
    ASSERT_EQ(r.corrections->path_predicted[kDead * nt + k], kPathMeasured) << k;
  }
}

TEST(DeadRadiometer, EachMethodCorrectsTheDeadAntennaWithinOneAndAHalfTimesItsNeighbours) {
  std::vector<double> error_mm;
  for (const PathPredictionMethod method :
       {PathPredictionMethod::kNeighbours, PathPredictionMethod::kFrozenFlow}) {
    SCOPED_TRACE(to_string(method));
    const NightProcessingResult r = run(true, method);
    ASSERT_TRUE(r.path_prediction.has_value());
    const PredictedPaths& p = *r.path_prediction;
    EXPECT_EQ(p.method, method) << p.message;
    const std::size_t nt = r.paths.time_s.size();
    // Only the dead antenna is predicted, at every sample.
    for (std::size_t a = 0; a < dead_night().antenna_count(); ++a)
      EXPECT_EQ(p.predicted_samples[a], a == kDead ? nt : 0u) << a;
    const CorrectionMetrics& m = *r.metrics;
    const double dead = m.antennas[kDead].rms_after_deg, neighbours = neighbour_rms_deg(m);
    ASSERT_GT(m.antennas[kDead].samples, 0u);
    error_mm.push_back(prediction_error_rms_mm(p));
    std::cout << "[ figures  ] " << to_string(method) << ": dead antenna " << dead
              << " deg after correction (" << m.antennas[kDead].rms_before_deg
              << " before), healthy neighbours " << neighbours << " deg, ratio "
              << dead / neighbours << "; path error " << 1e3 * error_mm.back()
              << " um rms, expected " << 1e3 * p.expected_residual_mm[kDead] << " um; "
              << p.frozen_flow_samples[kDead] << " of " << nt << " samples by frozen flow\n";
    EXPECT_LT(dead / neighbours, 1.5);
    EXPECT_GT(m.antennas[kDead].improvement_factor, 1.5);
    // The expected residual tells the size of the real error (within a factor of two).
    EXPECT_GT(p.expected_residual_mm[kDead], 0.5 * error_mm.back());
    EXPECT_LT(p.expected_residual_mm[kDead], 2.0 * error_mm.back());
    // The corrections carry the prediction, marked.
    const PhaseCorrections& c = *r.corrections;
    for (std::size_t k = 0; k < nt; ++k) {
      ASSERT_EQ(c.flags[kDead * nt + k], 0) << k;
      ASSERT_NE(c.path_predicted[kDead * nt + k], kPathMeasured) << k;
      ASSERT_EQ(c.path_predicted[(kDead - 1) * nt + k], kPathMeasured) << k;
    }
    EXPECT_EQ(c.predicted_expected_residual_mm[kDead], p.expected_residual_mm[kDead]);
    EXPECT_TRUE(std::isnan(c.predicted_expected_residual_mm[kDead - 1]));
  }
  // Upwind samples brought closer by the wind predict better than same-time neighbours.
  EXPECT_LT(error_mm[1], error_mm[0]);
}

TEST(DeadRadiometer, AStretchWithoutSamplesIsPredictedAndTheRestStaysMeasured) {
  // The same night, 20 minutes long, with the radiometer out from 400 s to 700 s only.
  Scenario scenario = load_scenario(test::testdata("scenarios/dead-radiometer.toml"));
  scenario.duration_s = 1200.0;
  ASSERT_EQ(scenario.faults.size(), 1u);
  scenario.faults[0].start_s = 400.0;
  scenario.faults[0].stop_s = 700.0;
  const Night night = simulate_night(scenario);
  NightProcessingOptions options;
  options.last_stage = NightStage::kCorrection;
  const NightProcessingResult r = process_night(night, options);
  ASSERT_TRUE(r.path_prediction.has_value());
  const std::size_t nt = r.paths.time_s.size();
  std::size_t outage = 0;
  for (std::size_t k = 0; k < nt; ++k) {
    const bool out = night.radiometer.valid[kDead * nt + k] == 0;
    outage += out ? 1 : 0;
    // Predicted exactly where the radiometer gave nothing; measured samples are left alone.
    ASSERT_EQ(r.corrections->path_predicted[kDead * nt + k] != kPathMeasured, out) << k;
    if (!out) {
      ASSERT_EQ(r.corrections->path_mm[kDead * nt + k], r.paths.path_mm[kDead * nt + k]) << k;
    }
    ASSERT_EQ(r.corrections->flags[kDead * nt + k], 0) << k;
  }
  EXPECT_NEAR(static_cast<double>(outage), 300.0, 2.0);
  EXPECT_EQ(r.path_prediction->predicted_samples[kDead], outage);
  EXPECT_GT(r.path_prediction->expected_residual_mm[kDead], 0.0);
}

}  // namespace
}  // namespace wvr
