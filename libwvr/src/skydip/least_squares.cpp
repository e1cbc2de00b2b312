// Levenberg-Marquardt with Marquardt's diagonal scaling; steps are clipped at the lower bounds.
#include "skydip/least_squares.hpp"

#include <algorithm>
#include <cmath>

namespace wvr::detail {

LeastSquaresResult levenberg_marquardt(const ResidualFunction& residuals,
                                       Eigen::VectorXd x,
                                       const Eigen::VectorXd& lower_bound,
                                       int max_iterations) {
  Eigen::VectorXd r;
  Eigen::MatrixXd J;
  residuals(x, r, J);
  double cost = r.squaredNorm();
  double lambda = 1e-3;
  bool converged = false;
  for (int iteration = 0; iteration < max_iterations && !converged; ++iteration) {
    const Eigen::MatrixXd normal = J.transpose() * J;
    const Eigen::VectorXd gradient = J.transpose() * r;
    bool improved = false;
    while (lambda < 1e12) {
      Eigen::MatrixXd damped = normal;
      damped.diagonal() += lambda * normal.diagonal().cwiseMax(1e-12);
      Eigen::VectorXd trial = x - damped.ldlt().solve(gradient);
      trial = trial.cwiseMax(lower_bound);
      Eigen::VectorXd trial_r;
      Eigen::MatrixXd trial_J;
      residuals(trial, trial_r, trial_J);
      const double trial_cost = trial_r.squaredNorm();
      if (std::isfinite(trial_cost) && trial_cost <= cost) {
        const double decrease = cost - trial_cost;
        const double step = (trial - x).norm();
        x = trial;
        r = trial_r;
        J = trial_J;
        // Converged when the cost no longer falls and the step is negligible.
        converged = decrease <= 1e-12 * (1.0 + cost) || step <= 1e-10 * (1.0 + x.norm());
        cost = trial_cost;
        lambda = std::max(lambda / 10.0, 1e-12);
        improved = true;
        break;
      }
      lambda *= 10.0;
    }
    if (!improved) {
      converged = true;  // no downhill step left at any damping: a minimum to working precision
    }
  }
  LeastSquaresResult result;
  result.x = x;
  result.cost = cost;
  result.converged = converged;
  result.covariance =
      (J.transpose() * J).ldlt().solve(Eigen::MatrixXd::Identity(x.size(), x.size()));
  return result;
}

}  // namespace wvr::detail
