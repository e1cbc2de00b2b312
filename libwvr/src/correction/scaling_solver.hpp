#pragma once
// The scaling solve's least-squares problem (wvr/calibration.hpp) and its solver.
//
// Cost: 1/2 sum over rows of w rho(|e^i phi_obs - e^i phi_model|^2), rho the Cauchy loss
// rho(s) = b log(1 + s / b) with b = loss_scale^2, w the row's weight (a reduced
// integration's antenna rows stand for several baselines), plus, with a scale per antenna, the
// prior 1/2 sum ((r_a - 1) / sigma)^2 on each antenna's ratio to the array scale.
//
// Solver: Levenberg-Marquardt on the Gauss-Newton model of that cost with iteratively
// reweighted rows (weight w rho'(s); the Cauchy loss has rho'' < 0, where the reweighting is
// the whole loss correction; Triggs et al. (2000), Bundle Adjustment - A Modern Synthesis, on
// robustified least squares, from memory), damped by diag(H) / radius (Marquardt's scaling), the
// radius updated from the ratio of actual to predicted decrease (Madsen, Nielsen & Tingleff (2004),
// Methods for Non-Linear Least Squares Problems, 2nd ed., sec. 3.2, from memory).
//
// What makes it fast is the shape of the normal equations: a scan's antenna offsets and its
// integrations' common phases touch no other scan, so each iteration eliminates, scan by scan,
// first every common phase (one number each), then the scan's offsets (a dense block of at most
// one per antenna), and solves only the few global parameters (segment scales, antenna ratios)
// densely. One iteration is one pass over the rows plus small dense algebra, with no per-row
// bookkeeping. The covariance of the global parameters is the inverse of the same reduced
// matrix at the solution (the offsets and common phases marginalised), i.e. the globals' block
// of (J^T W J)^-1 of the reweighted Jacobian.

#include <Eigen/Core>
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "correction/scaling_rows.hpp"

namespace wvr::detail {

// The free parameters of one solve. Offsets of the reference antenna stay 0; ratios stay 1
// when they are not fitted.
struct ScalingParameters {
  std::vector<double> segment_scale;  // [segment]
  std::vector<double> ratio;          // [antenna]: antenna scale / array scale
  std::vector<double> offsets;        // [scan, antenna]
  std::vector<double> common;         // [reduced integration]
};

struct ScalingSolveSettings {
  std::size_t antennas = 0, reference = 0;
  double loss_scale = 0.5;
  bool per_antenna = false;  // ratios free under the prior, or all held at 1
  double ratio_prior_sigma = 0.1;
  int max_iterations = 100;
  double function_tolerance = 1e-7;    // relative cost change that ends the solve
  double parameter_tolerance = 1e-10;  // step norm, relative to the parameter norm
};

enum class ScalingTermination { kConverged, kIterationLimit, kFailure };

struct ScalingSolveSummary {
  ScalingTermination termination = ScalingTermination::kFailure;
  std::string message;
  int iterations = 0;     // steps tried, accepted or not
  double final_cost = 0;  // with the prior's
  double prior_cost = 0;
};

class ScalingSolver {
 public:
  // `rows` must outlive the solver.
  ScalingSolver(const ScalingRows& rows, const ScalingSolveSettings& settings);

  // Minimises the cost from `p` (updated in place).
  ScalingSolveSummary solve(ScalingParameters& p) const;

  // Cost at `p`: the data's and the prior's.
  double data_cost(const ScalingParameters& p) const;
  double prior_cost(const ScalingParameters& p) const;

  // Whether an antenna's ratio is a free parameter (fitted per antenna, and in some row).
  bool ratio_free(std::size_t antenna) const { return ratio_global_[antenna] >= 0; }

  // Covariance of the global parameters at `p` (segment scales, then the free ratios in
  // antenna order), offsets and common phases marginalised. False when it is singular.
  bool global_covariance(const ScalingParameters& p, Eigen::MatrixXd& covariance) const;

  // Index of a segment scale or an antenna ratio in global_covariance's matrix (-1: not free).
  std::ptrdiff_t segment_index(std::size_t segment) const {
    return static_cast<std::ptrdiff_t>(segment);
  }
  std::ptrdiff_t ratio_index(std::size_t antenna) const { return ratio_global_[antenna]; }

 private:
  struct Linearisation;  // per row: reweighted weight and gradient, at one point
  struct Step;

  double evaluate(const ScalingParameters& p, Linearisation* out) const;
  bool reduced_system(const ScalingParameters& p,
                      const Linearisation& lin,
                      double damping,
                      Eigen::MatrixXd& global_matrix,
                      Eigen::VectorXd& global_rhs,
                      Step* step) const;
  bool compute_step(const ScalingParameters& p,
                    const Linearisation& lin,
                    double damping,
                    ScalingParameters& delta,
                    double& predicted_decrease) const;

  const ScalingRows& rows_;
  ScalingSolveSettings settings_;
  std::size_t globals_ = 0;                   // segment scales, then free ratios
  std::vector<std::ptrdiff_t> ratio_global_;  // [antenna] global index, -1 when held at 1
  // Compressed lists: each scan's baseline rows, integrations, free offsets (antennas) and
  // global parameters; each integration's antenna rows.
  std::vector<std::size_t> scan_row_start_, scan_rows_;
  std::vector<std::size_t> scan_integration_start_, scan_integrations_;
  std::vector<std::size_t> integration_row_start_, integration_rows_;
  std::vector<std::size_t> scan_offset_start_, scan_offset_antennas_;
  std::vector<std::size_t> scan_global_start_, scan_globals_;
  std::vector<char> offset_free_;  // [scan, antenna]
};

}  // namespace wvr::detail
