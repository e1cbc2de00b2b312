// Path prediction for antennas without radiometer samples, on synthetic screens: the kriging
// weights, the expected residual, the frozen-flow shift, which samples are predicted, and how
// the predicted samples enter the phase corrections.
#include "wvr/path_prediction.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>

#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/streaming_corrector.hpp"

namespace wvr {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

Night array_night(const std::vector<std::array<double, 2>>& east_north_m) {
  Night night;
  for (std::size_t a = 0; a < east_north_m.size(); ++a) {
    night.array.antenna_names.push_back("A" + std::to_string(a));
    night.array.position_enu_m.push_back({east_north_m[a][0], east_north_m[a][1], 0.0});
  }
  return night;
}

// Paths of every antenna at 1 s samples from a screen path(east, north, time); antenna `dead`
// has none (flagged no data) over [dead_from_s, dead_to_s).
AntennaPaths screen_paths(const Night& night,
                          std::size_t samples,
                          const std::function<double(double, double, double)>& screen_mm,
                          std::size_t dead,
                          double dead_from_s,
                          double dead_to_s) {
  AntennaPaths p;
  p.antennas = night.antenna_count();
  for (std::size_t k = 0; k < samples; ++k) p.time_s.push_back(static_cast<double>(k));
  for (std::size_t a = 0; a < p.antennas; ++a) {
    for (std::size_t k = 0; k < samples; ++k) {
      const double t = p.time_s[k];
      const bool missing = a == dead && t >= dead_from_s && t < dead_to_s;
      const auto& x = night.array.position_enu_m[a];
      p.path_mm.push_back(missing ? kNaN : screen_mm(x[0], x[1], t));
      p.flags.push_back(missing ? kCorrectorNoData : 0);
    }
  }
  return p;
}

// Structure function of a Kolmogorov screen, D = (d / 100 m)^(5/3) mm^2 (in m^2).
double kolmogorov_m2(double d_m) { return 1e-6 * std::pow(d_m / 100.0, 5.0 / 3.0); }

WindEstimate wind(double east_m_s, double north_m_s) {
  WindEstimate w;
  w.status = DiagnosticStatus::kOk;
  w.east_m_s = east_m_s;
  w.north_m_s = north_m_s;
  w.speed_m_s = std::hypot(east_m_s, north_m_s);
  return w;
}

PathPredictionOptions neighbours_only() {
  PathPredictionOptions o;
  o.method = PathPredictionMethod::kNeighbours;
  return o;
}

TEST(PathPrediction, OneDonorCopiesItsPathAndExpectsTheStructureFunctionAtItsDistance) {
  const Night night = array_night({{0.0, 0.0}, {150.0, 0.0}});
  const AntennaPaths paths = screen_paths(
      night, 100, [](double e, double, double t) { return 0.01 * e + 0.001 * t; }, 0, 0.0, 1e9);
  const PredictedPaths p =
      predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, neighbours_only());
  ASSERT_EQ(p.predicted_samples[0], 100u);
  for (std::size_t k = 0; k < 100; ++k) {
    EXPECT_DOUBLE_EQ(p.paths.path_mm[k], paths.path_mm[100 + k]);
    EXPECT_EQ(p.paths.flags[k], 0);
    EXPECT_EQ(p.sample_method[k], kPathFromNeighbours);
    EXPECT_EQ(p.sample_method[100 + k], kPathMeasured);
  }
  // One donor: weight 1, variance 2 gamma(d) = D(d).
  EXPECT_NEAR(p.expected_residual_mm[0], std::sqrt(1e6 * kolmogorov_m2(150.0)), 1e-12);
  EXPECT_TRUE(std::isnan(p.expected_residual_mm[1]));
}

TEST(PathPrediction, DonorsThatRepeatEachOtherShareTheirWeight) {
  // Two donors 1 m apart west of the target, one as far east: kriging gives the close pair
  // together about half the weight (inverse-distance weighting would give it two thirds).
  const Night night = array_night({{0.0, 0.0}, {-100.0, 0.0}, {-100.0, 1.0}, {100.0, 0.0}});
  const AntennaPaths paths = screen_paths(
      night, 100, [](double e, double, double) { return e < 0.0 ? 1.0 : 0.0; }, 0, 0.0, 1e9);
  const PredictedPaths p =
      predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, neighbours_only());
  ASSERT_EQ(p.predicted_samples[0], 100u);
  EXPECT_NEAR(p.paths.path_mm[0], 0.5, 0.02);
  // Four donors on a square around the target share equally; a constant passes unchanged.
  const Night square =
      array_night({{0.0, 0.0}, {50.0, 50.0}, {-50.0, 50.0}, {-50.0, -50.0}, {50.0, -50.0}});
  const AntennaPaths constant = screen_paths(
      square, 100, [](double e, double n, double) { return 3.0 + e * n * 1e-4; }, 0, 0.0, 1e9);
  const PredictedPaths q =
      predict_missing_paths(square, constant, WindEstimate{}, kolmogorov_m2, neighbours_only());
  EXPECT_NEAR(q.paths.path_mm[0], 3.0, 1e-9);
}

TEST(PathPrediction, FrozenFlowShiftsAnUpwindAntennasPathByTheFlowTime) {
  // A screen blowing east at 10 m/s; the donors are 100 m upwind (west) of the target and
  // 100 m across the wind on either side.
  const auto screen = [](double e, double n, double t) {
    const double x = e - 10.0 * t;
    return std::sin(x / 37.0) + 0.5 * std::sin(x / 11.0 + n / 23.0) + 0.3 * std::cos(n / 17.0);
  };
  const Night night = array_night({{0.0, 0.0}, {-100.0, 0.0}, {0.0, 100.0}, {0.0, -100.0}});
  const AntennaPaths paths = screen_paths(night, 600, screen, 0, 0.0, 1e9);
  PathPredictionOptions flow;
  flow.method = PathPredictionMethod::kFrozenFlow;
  const PredictedPaths f =
      predict_missing_paths(night, paths, wind(10.0, 0.0), kolmogorov_m2, flow);
  const PredictedPaths n =
      predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, neighbours_only());
  double flow_error2 = 0.0, neighbour_error2 = 0.0;
  for (std::size_t k = 0; k < 600; ++k) {
    const double truth = screen(0.0, 0.0, static_cast<double>(k));
    if (k < 10) {
      // The upwind antenna's path 10 s back does not exist yet: neighbours only.
      EXPECT_EQ(f.sample_method[k], kPathFromNeighbours) << k;
      continue;
    }
    EXPECT_EQ(f.sample_method[k], kPathFromFrozenFlow) << k;
    // The lagged donor lands on the target: the prediction is that sample.
    EXPECT_NEAR(f.paths.path_mm[k], truth, 1e-9) << k;
    flow_error2 += std::pow(f.paths.path_mm[k] - truth, 2);
    neighbour_error2 += std::pow(n.paths.path_mm[k] - truth, 2);
  }
  EXPECT_EQ(f.frozen_flow_samples[0], 590u);
  EXPECT_GT(neighbour_error2, 100.0 * flow_error2 + 1.0);
  EXPECT_LT(f.expected_residual_mm[0], n.expected_residual_mm[0]);
  // A lag limit below the flow time leaves the neighbours only.
  flow.max_lag_s = 5.0;
  const PredictedPaths none =
      predict_missing_paths(night, paths, wind(10.0, 0.0), kolmogorov_m2, flow);
  EXPECT_EQ(none.frozen_flow_samples[0], 0u);
}

TEST(PathPrediction, OnlyGapsOfAtLeastMinGapArePredicted) {
  const Night night = array_night({{0.0, 0.0}, {100.0, 0.0}, {0.0, 100.0}});
  AntennaPaths paths = screen_paths(
      night, 300, [](double e, double n, double t) { return 1e-3 * (e + n + t); }, 0, 100.0, 200.0);
  // A short gap of 10 s on antenna 1 and a retrieval-only flag on antenna 2.
  for (std::size_t k = 20; k < 30; ++k) {
    paths.path_mm[300 + k] = kNaN;
    paths.flags[300 + k] = kCorrectorBadBrightness;
  }
  paths.path_mm[600 + 250] = kNaN;
  paths.flags[600 + 250] = kCorrectorNoCoefficients;
  PathPredictionOptions o = neighbours_only();
  o.min_gap_s = 60.0;
  const PredictedPaths p = predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, o);
  EXPECT_EQ(p.predicted_samples[0], 100u);
  EXPECT_EQ(p.predicted_samples[1], 0u);
  EXPECT_EQ(p.predicted_samples[2], 0u);
  for (std::size_t k = 0; k < 300; ++k)
    EXPECT_EQ(p.sample_method[k] != kPathMeasured, k >= 100 && k < 200) << k;
  // The short gap stays flagged.
  EXPECT_EQ(p.paths.flags[300 + 25], kCorrectorBadBrightness);
  o.min_gap_s = 5.0;
  EXPECT_EQ(
      predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, o).predicted_samples[1],
      10u);
}

TEST(PathPrediction, PredictedSamplesEnterTheCorrectionsWithTheAntennaScale) {
  const Night night = array_night({{0.0, 0.0}, {100.0, 0.0}});
  const AntennaPaths paths = screen_paths(
      night, 100, [](double, double, double t) { return 1.0 + 0.01 * t; }, 0, 0.0, 1e9);
  const PredictedPaths p =
      predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, neighbours_only());
  PhaseCorrections c;
  c.obs_freq_ghz = 230.0;
  c.phase_per_path = 1.02;
  c.antenna_scale = {0.9, 1.0};
  c.time_s = paths.time_s;
  c.path_mm = paths.path_mm;
  c.flags = paths.flags;
  c.phase_correction_rad.assign(200, 0.0);
  apply_predicted_paths(c, p);
  // The corrector's arithmetic (wvr/streaming_corrector.hpp): -(2 pi f / c) k s L.
  const double rad_per_mm =
      -2.0 * std::numbers::pi * 230e9 / constants::speed_of_light_m_per_s * 1.02 * 1e-3;
  for (std::size_t k = 0; k < 100; ++k) {
    EXPECT_EQ(c.flags[k], 0);
    EXPECT_EQ(c.path_predicted[k], kPathFromNeighbours);
    EXPECT_EQ(c.path_predicted[100 + k], kPathMeasured);
    EXPECT_NEAR(c.phase_correction_rad[k], rad_per_mm * 0.9 * paths.path_mm[100 + k], 1e-12);
    EXPECT_EQ(c.phase_correction_rad[100 + k], 0.0);  // measured samples are left alone
  }
  EXPECT_EQ(c.predicted_expected_residual_mm[0], p.expected_residual_mm[0]);
  c.time_s.pop_back();
  EXPECT_THROW(apply_predicted_paths(c, p), InvalidInput);
}

TEST(PathPrediction, RejectsBadInput) {
  const Night night = array_night({{0.0, 0.0}, {100.0, 0.0}});
  const AntennaPaths paths = screen_paths(
      night, 10, [](double, double, double) { return 1.0; }, 0, 0.0, 1e9);
  PathPredictionOptions o = neighbours_only();
  o.donors = 0;
  EXPECT_THROW(predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, o), InvalidInput);
  o = neighbours_only();
  o.min_gap_s = -1.0;
  EXPECT_THROW(predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2, o), InvalidInput);
  // Frozen flow without a measured wind, no structure function, paths of another shape.
  EXPECT_THROW(predict_missing_paths(night, paths, WindEstimate{}, kolmogorov_m2), InvalidInput);
  EXPECT_THROW(predict_missing_paths(night, paths, WindEstimate{}, {}, neighbours_only()),
               InvalidInput);
  AntennaPaths shorter = paths;
  shorter.path_mm.pop_back();
  EXPECT_THROW(
      predict_missing_paths(night, shorter, WindEstimate{}, kolmogorov_m2, neighbours_only()),
      InvalidInput);
  EXPECT_THROW(path_prediction_method_from_string("nearest"), InvalidInput);
  EXPECT_EQ(path_prediction_method_from_string("frozen_flow"), PathPredictionMethod::kFrozenFlow);
}

}  // namespace
}  // namespace wvr
