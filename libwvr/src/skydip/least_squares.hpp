#pragma once
// A small Levenberg-Marquardt solver for the sky-dip fits: a handful of parameters, residuals
// and Jacobian from a callback, lower bounds per parameter (opacities and PWV stay positive).

#include <Eigen/Dense>
#include <functional>

namespace wvr::detail {

// Fills residuals r (weighted, prior rows included) and Jacobian J = dr/dx at x.
using ResidualFunction =
    std::function<void(const Eigen::VectorXd& x, Eigen::VectorXd& r, Eigen::MatrixXd& J)>;

struct LeastSquaresResult {
  Eigen::VectorXd x;
  Eigen::MatrixXd covariance;  // (J^T J)^-1 at the solution, unscaled
  double cost = 0.0;           // sum of squared residuals
  bool converged = false;
};

LeastSquaresResult levenberg_marquardt(const ResidualFunction& residuals,
                                       Eigen::VectorXd x,
                                       const Eigen::VectorXd& lower_bound,
                                       int max_iterations);

}  // namespace wvr::detail
