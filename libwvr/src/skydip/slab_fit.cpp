// Single-slab fit of one channel: three parameters (opacity, slab temperature, offset), the
// temperature tied to its prior where the data do not see it (thin channel).
#include "skydip/slab_fit.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "skydip/least_squares.hpp"

namespace wvr::detail {

double plane_parallel_airmass(double elevation_deg) {
  return 1.0 / std::sin(elevation_deg * std::numbers::pi / 180.0);
}

SlabFitResult fit_slab(const SlabFitInput& input) {
  const Eigen::Index n = static_cast<Eigen::Index>(input.brightness_k.size());
  const double sigma = input.noise_k > 0.0 ? input.noise_k : 1.0;
  const double prior_sigma = input.temperature_prior_sigma_k;
  auto residuals = [&](const Eigen::VectorXd& x, Eigen::VectorXd& r, Eigen::MatrixXd& J) {
    r.resize(n + 1);
    J.setZero(n + 1, 3);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double airmass = plane_parallel_airmass(input.elevation_deg[i]);
      const double transmission = std::exp(-x[0] * airmass);
      const double model = x[2] + x[1] * (1.0 - transmission) + input.background_k * transmission;
      r[i] = (model - input.brightness_k[i]) / sigma;
      J(i, 0) = (x[1] - input.background_k) * airmass * transmission / sigma;
      J(i, 1) = (1.0 - transmission) / sigma;
      J(i, 2) = 1.0 / sigma;
    }
    r[n] = (x[1] - input.temperature_prior_k) / prior_sigma;
    J(n, 1) = 1.0 / prior_sigma;
  };
  Eigen::VectorXd start(3);
  start << std::max(input.opacity_start_np, 1e-4), input.temperature_prior_k, 0.0;
  Eigen::VectorXd lower(3);
  lower << 1e-8, 1.0, -1e9;
  const LeastSquaresResult fit = levenberg_marquardt(residuals, start, lower, input.max_iterations);

  Eigen::VectorXd r;
  Eigen::MatrixXd J;
  residuals(fit.x, r, J);
  const double data_chi2 = r.head(n).squaredNorm();
  // Degrees of freedom: the prior row is an observation, so n + 1 rows for 3 parameters.
  const double dof = std::max<double>(1.0, static_cast<double>(n) + 1.0 - 3.0);
  const double scale = std::max(fit.cost / dof, 1e-30);
  SlabFitResult out;
  out.opacity_np = fit.x[0];
  out.temperature_k = fit.x[1];
  out.offset_k = fit.x[2];
  out.opacity_sigma_np = std::sqrt(fit.covariance(0, 0) * scale);
  out.temperature_sigma_k = std::sqrt(fit.covariance(1, 1) * scale);
  out.offset_sigma_k = std::sqrt(fit.covariance(2, 2) * scale);
  out.temperature_data_share =
      std::clamp(1.0 - fit.covariance(1, 1) / (prior_sigma * prior_sigma), 0.0, 1.0);
  out.rms_k = std::sqrt(data_chi2 / static_cast<double>(n)) * sigma;
  out.converged = fit.converged;
  return out;
}

}  // namespace wvr::detail
