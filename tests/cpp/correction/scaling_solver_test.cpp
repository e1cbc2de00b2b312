// The structured scaling solver against Ceres 2.1's own solve of the same cost: the
// Levenberg-Marquardt minimiser with SPARSE_NORMAL_CHOLESKY (ceres::Solve) and the covariance
// (ceres::Covariance, DENSE_SVD) of the same rows, written as Ceres cost functions with Ceres'
// CauchyLoss and ScaledLoss (ceres_phase_residuals.hpp).
#include "correction/scaling_solver.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <map>
#include <memory>
#include <numbers>
#include <random>
#include <vector>

#include "correction/ceres_phase_residuals.hpp"

namespace wvr::detail {
namespace {

constexpr std::size_t kAntennas = 6;
constexpr std::size_t kReference = 0;
constexpr double kLossScale = 0.5;
constexpr double kPriorSigma = 0.1;

// Four calibrator scans in two segments: scans 0 and 1 of reference baselines (rows fitted as
// they are), scans 2 and 3 of reduced integrations (antenna phases with a common phase each).
// Scan 3 leaves the reference antenna out, so its offsets and common phases share one free
// direction (the gauge). Phases follow the model with 0.15 rad of noise and a few outliers.
struct Synthetic {
  ScalingRows rows;
  ScalingParameters truth, start;
};

Synthetic make_synthetic() {
  Synthetic s;
  std::mt19937_64 rng(20261204);
  std::normal_distribution<double> gauss(0.0, 1.0);
  std::uniform_real_distribution<double> uniform(-std::numbers::pi, std::numbers::pi);
  ScalingRows& rows = s.rows;
  rows.scans = 4;
  rows.segments = 2;
  ScalingParameters& truth = s.truth;
  truth.segment_scale = {0.93, 1.04};
  truth.ratio = {1.0, 1.05, 0.97, 1.0, 1.02, 0.99};
  truth.offsets.assign(rows.scans * kAntennas, 0.0);
  for (std::size_t scan = 0; scan < rows.scans; ++scan)
    for (std::size_t a = 0; a < kAntennas; ++a)
      if (a != kReference) truth.offsets[scan * kAntennas + a] = uniform(rng);
  std::vector<double> path(kAntennas, 0.0);
  auto wander = [&] {
    for (double& p : path) p += 0.05 * gauss(rng);
  };
  int row_count = 0;
  auto observed = [&](double model) {
    ++row_count;
    const double outlier = row_count % 37 == 0 ? 2.5 : 0.0;
    return model + 0.15 * gauss(rng) + outlier;
  };
  const double k = 4.8;
  for (std::uint32_t scan = 0; scan < 2; ++scan) {
    for (int t = 0; t < 60; ++t) {
      wander();
      for (std::uint32_t b = 1; b < kAntennas; ++b) {
        const double model =
            k * truth.segment_scale[0] * (truth.ratio[b] * path[b] - truth.ratio[0] * path[0]) +
            truth.offsets[scan * kAntennas + b];
        rows.rows.push_back({observed(model), k, path[0], path[b], 0, b, scan, 0});
      }
    }
  }
  for (std::uint32_t scan = 2; scan < 4; ++scan) {
    for (int t = 0; t < 60; ++t) {
      wander();
      const auto integration = static_cast<std::uint32_t>(rows.integrations.size());
      const double common = uniform(rng);
      truth.common.push_back(common);
      rows.integrations.push_back({1.0 + 2.0 * 10.0 / 5.0, std::nan("")});
      for (std::uint32_t a = scan == 3 ? 1 : 0; a < kAntennas; ++a) {
        const double model = k * truth.segment_scale[1] * truth.ratio[a] * path[a] +
                             truth.offsets[scan * kAntennas + a] + common;
        rows.antenna_rows.push_back({observed(model), k, path[a], a, scan, 1, integration});
      }
    }
  }
  // Start: the truth moved by about its uncertainty, as the calibration's grid start is.
  s.start = truth;
  s.start.segment_scale = {1.0, 1.0};
  s.start.ratio.assign(kAntennas, 1.0);
  for (double& o : s.start.offsets) o = o == 0.0 ? 0.0 : o + 0.1 * gauss(rng);
  for (double& c : s.start.common) c += 0.1 * gauss(rng);
  return s;
}

// The same cost as a Ceres problem over `p`; scan 3's offset of antenna 1 held at its start
// value fixes the gauge (the cost does not change along it, nor do the global parameters).
struct CeresScaling {
  ScalingParameters p;
  double zero = 0.0;
  ceres::Problem problem;
  ceres::Solver::Summary summary;

  CeresScaling(const ScalingRows& rows, ScalingParameters start, bool per_antenna)
      : p(std::move(start)) {
    auto offset = [&](std::size_t scan, std::size_t a) {
      return a == kReference ? &zero : &p.offsets[scan * kAntennas + a];
    };
    ceres::LossFunction* loss = new ceres::CauchyLoss(kLossScale);
    for (const Row& r : rows.rows) {
      problem.AddResidualBlock(new PhaseResidual(r), loss, &p.segment_scale[r.segment],
                               &p.ratio[r.a], &p.ratio[r.b], offset(r.scan, r.a),
                               offset(r.scan, r.b));
    }
    std::map<double, ceres::LossFunction*> weighted;
    for (const AntennaRow& r : rows.antenna_rows) {
      ceres::LossFunction*& w = weighted[rows.integrations[r.integration].weight];
      if (w == nullptr)
        w = new ceres::ScaledLoss(new ceres::CauchyLoss(kLossScale),
                                  rows.integrations[r.integration].weight, ceres::TAKE_OWNERSHIP);
      problem.AddResidualBlock(new AntennaPhaseResidual(r), w, &p.segment_scale[r.segment],
                               &p.ratio[r.antenna], offset(r.scan, r.antenna),
                               &p.common[r.integration]);
    }
    problem.SetParameterBlockConstant(&zero);
    problem.SetParameterBlockConstant(offset(3, 1));
    for (std::size_t a = 0; a < kAntennas; ++a) {
      if (!per_antenna) {
        problem.SetParameterBlockConstant(&p.ratio[a]);
        continue;
      }
      problem.AddResidualBlock(
          new ceres::AutoDiffCostFunction<RatioPriorResidual, 1, 1>(new RatioPriorResidual),
          nullptr, &p.ratio[a]);
    }
  }

  struct RatioPriorResidual {
    template <typename T>
    bool operator()(const T* ratio, T* residual) const {
      residual[0] = (ratio[0] - 1.0) / kPriorSigma;
      return true;
    }
  };

  void solve() {
    ceres::Solver::Options options;
    options.linear_solver_type = ceres::SPARSE_NORMAL_CHOLESKY;
    options.max_num_iterations = 200;
    options.function_tolerance = 1e-15;
    options.parameter_tolerance = 1e-15;
    options.gradient_tolerance = 1e-15;
    ceres::Solve(options, &problem, &summary);
  }

  double covariance(double* x, double* y) {
    ceres::Covariance::Options options;
    options.algorithm_type = ceres::DENSE_SVD;
    ceres::Covariance covariance(options);
    std::vector<std::pair<const double*, const double*>> blocks = {{x, y}};
    EXPECT_TRUE(covariance.Compute(blocks, &problem));
    double value = std::nan("");
    covariance.GetCovarianceBlock(x, y, &value);
    return value;
  }
};

ScalingSolveSettings tight_settings(bool per_antenna) {
  ScalingSolveSettings settings;
  settings.antennas = kAntennas;
  settings.reference = kReference;
  settings.loss_scale = kLossScale;
  settings.per_antenna = per_antenna;
  settings.ratio_prior_sigma = kPriorSigma;
  settings.max_iterations = 200;
  settings.function_tolerance = 1e-15;
  settings.parameter_tolerance = 1e-15;
  return settings;
}

void expect_same_minimum(bool per_antenna) {
  const Synthetic s = make_synthetic();
  const ScalingSolver solver(s.rows, tight_settings(per_antenna));
  ScalingParameters p = s.start;
  const ScalingSolveSummary summary = solver.solve(p);
  ASSERT_EQ(summary.termination, ScalingTermination::kConverged) << summary.message;

  CeresScaling ceres_fit(s.rows, s.start, per_antenna);
  ceres_fit.solve();
  ASSERT_EQ(ceres_fit.summary.termination_type, ceres::CONVERGENCE)
      << ceres_fit.summary.FullReport();

  EXPECT_NEAR(summary.final_cost, ceres_fit.summary.final_cost,
              1e-10 * ceres_fit.summary.final_cost);
  for (std::size_t seg = 0; seg < 2; ++seg)
    EXPECT_NEAR(p.segment_scale[seg], ceres_fit.p.segment_scale[seg], 1e-8) << "segment " << seg;
  for (std::size_t a = 0; a < kAntennas; ++a) {
    EXPECT_NEAR(p.ratio[a], ceres_fit.p.ratio[a], 1e-8) << "antenna " << a;
    EXPECT_EQ(solver.ratio_free(a), per_antenna);
  }
  // Offsets of the scans that reach the reference are determined; scan 3's differ from
  // Ceres' by the gauge only: the same for all its antennas.
  for (std::size_t scan = 0; scan < 3; ++scan)
    for (std::size_t a = 1; a < kAntennas; ++a)
      EXPECT_NEAR(p.offsets[scan * kAntennas + a], ceres_fit.p.offsets[scan * kAntennas + a], 1e-7);
  const double gauge = p.offsets[3 * kAntennas + 1] - ceres_fit.p.offsets[3 * kAntennas + 1];
  for (std::size_t a = 2; a < kAntennas; ++a)
    EXPECT_NEAR(p.offsets[3 * kAntennas + a] - ceres_fit.p.offsets[3 * kAntennas + a], gauge, 1e-7);

  Eigen::MatrixXd covariance;
  ASSERT_TRUE(solver.global_covariance(p, covariance));
  for (std::size_t seg = 0; seg < 2; ++seg) {
    double* x = &ceres_fit.p.segment_scale[seg];
    const auto i = solver.segment_index(seg);
    EXPECT_NEAR(covariance(i, i), ceres_fit.covariance(x, x), 1e-6 * covariance(i, i));
  }
  if (per_antenna) {
    double* scale = &ceres_fit.p.segment_scale[1];
    double* ratio = &ceres_fit.p.ratio[2];
    const auto is = solver.segment_index(1), ir = solver.ratio_index(2);
    EXPECT_NEAR(covariance(ir, ir), ceres_fit.covariance(ratio, ratio), 1e-6 * covariance(ir, ir));
    EXPECT_NEAR(covariance(is, ir), ceres_fit.covariance(scale, ratio),
                1e-6 * std::sqrt(covariance(is, is) * covariance(ir, ir)));
  }
  // The fit recovers the truth within a few sigma.
  for (std::size_t seg = 0; seg < 2; ++seg) {
    const auto i = solver.segment_index(seg);
    EXPECT_NEAR(p.segment_scale[seg], s.truth.segment_scale[seg],
                5.0 * std::sqrt(covariance(i, i)));
  }
}

TEST(ScalingSolver, OneScaleEqualsCeresSolveAndCovariance) { expect_same_minimum(false); }

TEST(ScalingSolver, PerAntennaScalesEqualCeresSolveAndCovariance) { expect_same_minimum(true); }

TEST(ScalingSolver, TheDefaultTolerancesStopNearTheTightMinimum) {
  const Synthetic s = make_synthetic();
  ScalingSolveSettings loose = tight_settings(true);
  loose.function_tolerance = 1e-7;
  loose.parameter_tolerance = 1e-10;
  ScalingParameters tight_p = s.start, loose_p = s.start;
  const ScalingSolver tight(s.rows, tight_settings(true));
  const ScalingSolver loose_solver(s.rows, loose);
  tight.solve(tight_p);
  const ScalingSolveSummary summary = loose_solver.solve(loose_p);
  EXPECT_EQ(summary.termination, ScalingTermination::kConverged);
  Eigen::MatrixXd covariance;
  ASSERT_TRUE(tight.global_covariance(tight_p, covariance));
  for (std::size_t seg = 0; seg < 2; ++seg)
    EXPECT_NEAR(loose_p.segment_scale[seg], tight_p.segment_scale[seg],
                1e-3 * std::sqrt(covariance(seg, seg)));
}

TEST(ScalingSolver, AnIterationLimitIsReportedAsSuch) {
  const Synthetic s = make_synthetic();
  ScalingSolveSettings settings = tight_settings(false);
  settings.max_iterations = 1;
  ScalingParameters p = s.start;
  const ScalingSolveSummary summary = ScalingSolver(s.rows, settings).solve(p);
  EXPECT_EQ(summary.termination, ScalingTermination::kIterationLimit);
  EXPECT_EQ(summary.iterations, 1);
}

}  // namespace
}  // namespace wvr::detail
