// Broken power-law fit of a structure function (wvr/structure_function.hpp).

#include <ceres/ceres.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <sstream>

#include "turbulence/log_points.hpp"
#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {

void BrokenPowerLawOptions::validate() const {
  require_in_range("transition_width", transition_width, 0.01, 5.0);
  if (max_iterations < 1)
    throw InvalidInput("max_iterations = " + std::to_string(max_iterations) + " must be positive");
}

double slab_break_over_thickness() {
  // I(beta) = integral_0^inf x^(1-beta) (1 - J0(x)) dx for 2 < beta < 4.
  const auto hankel_integral = [](double beta) {
    return -std::pow(2.0, 1.0 - beta) * std::tgamma(1.0 - beta / 2.0) / std::tgamma(beta / 2.0);
  };
  const double kz_integral = std::sqrt(std::numbers::pi) * std::tgamma(4.0 / 3.0) /
                             std::tgamma(11.0 / 6.0);  // integral (1 + u^2)^(-11/6) du
  return kz_integral * hankel_integral(8.0 / 3.0) /
         (2.0 * std::numbers::pi * hankel_integral(11.0 / 3.0));
}

namespace {

// Slope bounds of the fit: a path structure function rises no faster than d^2 (a smooth
// screen; some room left) and does not fall much (noise on saturated points).
constexpr double kMinSlope = -0.5, kMaxSlope = 2.5;

// ln of the model at ln(d). Parameters: ln A, alpha_short, alpha_long, ln d_break, ln w,
// ln D_sat (ignored unless saturating).
template <typename T>
T log_model(double log_d,
            const T& log_a,
            const T& alpha_s,
            const T& alpha_l,
            const T& log_break,
            const T& log_width,
            const T& log_sat,
            bool saturating) {
  using std::exp;
  using std::log;
  using std::log1p;
  const T x = log_d - log_break;
  const T w = exp(log_width);
  const T y = x / w;
  // Stable softplus ln(1 + e^y).
  const T softplus = y > T(0.0) ? y + log1p(exp(-y)) : log1p(exp(y));
  const T log_pl = log_a + alpha_s * x + (alpha_l - alpha_s) * w * softplus;
  if (!saturating) return log_pl;
  using std::expm1;
  // D_sat (1 - exp(-D / D_sat)) in logs.
  return log_sat + log(-expm1(-exp(log_pl - log_sat)));
}

struct LogResidual {
  LogResidual(double log_d, double log_value, bool saturating)
      : log_d_(log_d), log_value_(log_value), saturating_(saturating) {}
  template <typename T>
  bool operator()(const T* log_a,
                  const T* alpha_s,
                  const T* alpha_l,
                  const T* log_break,
                  const T* log_width,
                  const T* log_sat,
                  T* residual) const {
    residual[0] = T(log_value_) - log_model(log_d_, log_a[0], alpha_s[0], alpha_l[0], log_break[0],
                                            log_width[0], log_sat[0], saturating_);
    return true;
  }
  double log_d_, log_value_;
  bool saturating_;
};

// Straight-line least squares y = c + slope x with standard errors.
struct Line {
  double c = 0.0, slope = 0.0, slope_sigma = 0.0, c_sigma = 0.0, rms = 0.0;
};
Line fit_line(const std::vector<double>& x, const std::vector<double>& y) {
  const std::size_t n = x.size();
  Eigen::MatrixXd design(n, 2);
  Eigen::VectorXd rhs(n);
  for (std::size_t i = 0; i < n; ++i) {
    design(static_cast<Eigen::Index>(i), 0) = 1.0;
    design(static_cast<Eigen::Index>(i), 1) = x[i];
    rhs(static_cast<Eigen::Index>(i)) = y[i];
  }
  const Eigen::Vector2d p = design.colPivHouseholderQr().solve(rhs);
  const Eigen::VectorXd r = rhs - design * p;
  Line line;
  line.c = p(0);
  line.slope = p(1);
  line.rms = std::sqrt(r.squaredNorm() / static_cast<double>(n));
  if (n > 2) {
    const Eigen::Matrix2d cov =
        (design.transpose() * design).inverse() * r.squaredNorm() / static_cast<double>(n - 2);
    line.c_sigma = std::sqrt(cov(0, 0));
    line.slope_sigma = std::sqrt(cov(1, 1));
  }
  return line;
}

}  // namespace

double BrokenPowerLawFit::evaluate_m2(double separation_m) const {
  if (!(separation_m > 0.0) || !(amplitude_m2 > 0.0) || !(break_m > 0.0)) return std::nan("");
  const double width = transition_width > 0.0 ? transition_width : 0.5;
  return std::exp(log_model(
      std::log(separation_m), std::log(amplitude_m2), alpha_short, alpha_long, std::log(break_m),
      std::log(width), saturation_m2 > 0.0 ? std::log(saturation_m2) : 0.0, saturation_m2 > 0.0));
}

std::string BrokenPowerLawFit::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << (has_break ? ": slopes " : ": single power law, slope ")
      << alpha_short << " +/- " << alpha_short_sigma << " / " << alpha_long << " +/- "
      << alpha_long_sigma << ", break " << break_m << " +/- " << break_sigma_m << " m, A "
      << amplitude_m2 << " m^2";
  if (saturation_m2 > 0.0) out << ", saturation " << saturation_m2 << " m^2";
  out << ", " << points_used << " points, rms ln residual " << rms_log_residual;
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

BrokenPowerLawFit fit_broken_power_law(std::span<const double> separation_m,
                                       std::span<const double> structure_m2,
                                       const BrokenPowerLawOptions& options) {
  options.validate();
  const detail::LogPoints points = detail::log_points(separation_m, structure_m2);
  const std::vector<double>& log_d = points.log_d;
  const std::vector<double>& log_v = points.log_v;
  BrokenPowerLawFit fit;
  const std::size_t n = log_d.size();
  fit.points_used = n;
  fit.transition_width = options.transition_width;
  if (n < 2) {
    fit.status = DiagnosticStatus::kNoData;
    fit.message = "fewer than two positive, finite points";
    return fit;
  }
  const double log_min = *std::min_element(log_d.begin(), log_d.end());
  const double log_max = *std::max_element(log_d.begin(), log_d.end());
  if (!(log_max > log_min)) {
    fit.status = DiagnosticStatus::kNoData;
    fit.message = "all points at one separation";
    return fit;
  }
  const bool fit_width = options.fit_transition_width && n >= 7;
  const std::size_t parameters = 4 + (fit_width ? 1 : 0) + (options.fit_saturation ? 1 : 0);
  // Single power law through the points, reported at the geometric mean separation.
  const Line line = fit_line(log_d, log_v);
  const auto take_single_power_law = [&](DiagnosticStatus status, const std::string& why) {
    double mean_log_d = 0.0;
    for (double v : log_d) mean_log_d += v / static_cast<double>(n);
    BrokenPowerLawFit single;
    single.status = status;
    single.message = why;
    single.has_break = false;
    single.points_used = n;
    single.transition_width = options.transition_width;
    single.alpha_short = single.alpha_long = line.slope;
    single.alpha_short_sigma = single.alpha_long_sigma = line.slope_sigma;
    single.break_m = std::exp(mean_log_d);
    single.amplitude_m2 = std::exp(line.c + line.slope * mean_log_d);
    single.amplitude_sigma_m2 = single.amplitude_m2 * line.c_sigma;
    single.rms_log_residual = line.rms;
    return single;
  };
  if (n < parameters + 1) {
    return take_single_power_law(DiagnosticStatus::kTooFewPoints,
                                 std::to_string(n) +
                                     " points: single power law fitted (broken model needs " +
                                     std::to_string(parameters + 1) + ")");
  }

  // Start: grid search over the break with a sharp join (linear least squares per break).
  double best_sse = std::numeric_limits<double>::infinity();
  double start[3] = {0.0, 0.0, 0.0}, start_break = 0.5 * (log_min + log_max);
  constexpr int kGrid = 41;
  for (int g = 0; g < kGrid; ++g) {
    const double lb = log_min + (log_max - log_min) * g / (kGrid - 1.0);
    Eigen::MatrixXd design(static_cast<Eigen::Index>(n), 3);
    Eigen::VectorXd rhs(static_cast<Eigen::Index>(n));
    for (std::size_t i = 0; i < n; ++i) {
      const auto r = static_cast<Eigen::Index>(i);
      design(r, 0) = 1.0;
      design(r, 1) = std::min(log_d[i] - lb, 0.0);
      design(r, 2) = std::max(log_d[i] - lb, 0.0);
      rhs(r) = log_v[i];
    }
    const Eigen::VectorXd p = design.colPivHouseholderQr().solve(rhs);
    const double sse = (rhs - design * p).squaredNorm();
    if (sse < best_sse && p.allFinite()) {
      best_sse = sse;
      start[0] = p(0);
      // A side without points has an undetermined slope: take the other side's.
      const bool has_short =
          std::any_of(log_d.begin(), log_d.end(), [lb](double v) { return v < lb; });
      const bool has_long =
          std::any_of(log_d.begin(), log_d.end(), [lb](double v) { return v > lb; });
      start[1] = has_short ? p(1) : p(2);
      start[2] = has_long ? p(2) : p(1);
      start_break = lb;
    }
  }

  double log_a = start[0], alpha_s = start[1], alpha_l = start[2], log_break = start_break;
  double log_width = std::log(options.transition_width);
  double log_sat = *std::max_element(log_v.begin(), log_v.end()) + std::log(2.0);
  const bool saturating = options.fit_saturation;

  ceres::Problem problem;
  for (std::size_t i = 0; i < n; ++i) {
    problem.AddResidualBlock(new ceres::AutoDiffCostFunction<LogResidual, 1, 1, 1, 1, 1, 1, 1>(
                                 new LogResidual(log_d[i], log_v[i], saturating)),
                             nullptr, &log_a, &alpha_s, &alpha_l, &log_break, &log_width, &log_sat);
  }
  problem.SetParameterLowerBound(&log_break, 0, log_min);
  problem.SetParameterUpperBound(&log_break, 0, log_max);
  for (double* alpha : {&alpha_s, &alpha_l}) {
    problem.SetParameterLowerBound(alpha, 0, kMinSlope);
    problem.SetParameterUpperBound(alpha, 0, kMaxSlope);
  }
  if (fit_width) {
    problem.SetParameterLowerBound(&log_width, 0, std::log(0.05));
    // Wider joins let the two slopes trade off against each other on noisy data.
    problem.SetParameterUpperBound(&log_width, 0, std::log(1.5));
  } else {
    problem.SetParameterBlockConstant(&log_width);
  }
  if (saturating) {
    problem.SetParameterLowerBound(&log_sat, 0, *std::min_element(log_v.begin(), log_v.end()));
    problem.SetParameterUpperBound(&log_sat, 0, log_sat + 20.0);
  } else {
    problem.SetParameterBlockConstant(&log_sat);
  }

  ceres::Solver::Options solver_options;
  solver_options.linear_solver_type = ceres::DENSE_QR;
  solver_options.max_num_iterations = options.max_iterations;
  solver_options.logging_type = ceres::SILENT;
  solver_options.function_tolerance = 1e-12;
  solver_options.parameter_tolerance = 1e-12;
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);

  fit.amplitude_m2 = std::exp(log_a);
  fit.alpha_short = alpha_s;
  fit.alpha_long = alpha_l;
  fit.break_m = std::exp(log_break);
  fit.transition_width = std::exp(log_width);
  fit.saturation_m2 = saturating ? std::exp(log_sat) : 0.0;
  fit.rms_log_residual = std::sqrt(2.0 * summary.final_cost / static_cast<double>(n));
  if (summary.termination_type == ceres::CONVERGENCE) {
    fit.status = DiagnosticStatus::kOk;
  } else if (summary.termination_type == ceres::NO_CONVERGENCE) {
    fit.status = DiagnosticStatus::kNoConvergence;
    fit.message = summary.message;
    return fit;
  } else {
    fit.status = DiagnosticStatus::kSolverFailure;
    fit.message = summary.message;
    return fit;
  }
  // Keep the break only when it earns its extra parameters: Bayesian information criterion
  // n ln(SSE / n) + k ln n (Schwarz 1978, Annals of Statistics 6, 461), broken model against
  // the single power law. Points wholly inside one regime otherwise get a spurious break
  // whose slopes trade off against each other.
  if (!saturating) {
    const double dn = static_cast<double>(n);
    const double floor_sse = 1e-30;  // exact power laws: both SSEs vanish
    const double bic_single =
        dn * std::log(std::max(dn * line.rms * line.rms, floor_sse) / dn) + 2.0 * std::log(dn);
    const double bic_broken = dn * std::log(std::max(2.0 * summary.final_cost, floor_sse) / dn) +
                              static_cast<double>(parameters) * std::log(dn);
    if (bic_single <= bic_broken) {
      return take_single_power_law(DiagnosticStatus::kOk,
                                   "a single power law describes the points as well (BIC)");
    }
  }

  // A slope held at its bound describes nothing physical: say so.
  for (const auto& [name, alpha] :
       {std::pair{"alpha_short", alpha_s}, std::pair{"alpha_long", alpha_l}}) {
    if (alpha <= kMinSlope + 1e-6 || alpha >= kMaxSlope - 1e-6) {
      fit.slope_at_bound = true;
      fit.message += std::string(fit.message.empty() ? "" : "; ") + name +
                     " stopped at its bound " +
                     (alpha < 0.0 ? "-0.5 (the points fall or saturate there)" : "2.5");
    }
  }
  // Uncertainties: the covariance scaled by the residual variance (no per-point errors).
  std::vector<const double*> blocks = {&log_a, &alpha_s, &alpha_l, &log_break};
  if (saturating) blocks.push_back(&log_sat);
  ceres::Covariance::Options covariance_options;
  covariance_options.algorithm_type = ceres::DENSE_SVD;
  covariance_options.null_space_rank = -1;
  ceres::Covariance covariance(covariance_options);
  std::vector<std::pair<const double*, const double*>> wanted;
  for (const double* b : blocks) wanted.emplace_back(b, b);
  const double dof = static_cast<double>(n) - static_cast<double>(parameters);
  if (dof > 0.0 && covariance.Compute(wanted, &problem)) {
    const double s2 = 2.0 * summary.final_cost / dof;
    const auto sigma = [&](const double* b) {
      double v = 0.0;
      covariance.GetCovarianceBlock(b, b, &v);
      return std::sqrt(std::max(0.0, v * s2));
    };
    fit.amplitude_sigma_m2 = fit.amplitude_m2 * sigma(&log_a);
    fit.alpha_short_sigma = sigma(&alpha_s);
    fit.alpha_long_sigma = sigma(&alpha_l);
    fit.break_sigma_m = fit.break_m * sigma(&log_break);
    if (saturating) fit.saturation_sigma_m2 = fit.saturation_m2 * sigma(&log_sat);
  } else {
    fit.message += std::string(fit.message.empty() ? "" : "; ") +
                   "uncertainties not available (no spare degrees of freedom or singular fit)";
  }
  return fit;
}

}  // namespace wvr
