#include "wvr/calibration.hpp"

#include <ceres/ceres.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>
#include <sstream>

#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {

void CalibrationOptions::validate() const {
  require_in_range("antenna_scale_prior_sigma", antenna_scale_prior_sigma, 1e-6, 10.0);
  require_in_range("segment_s", segment_s, 0.0, 1e7, "s");
  if (reference_antenna < 0)
    throw InvalidInput("reference_antenna = " + std::to_string(reference_antenna) + " is negative");
  require_in_range("loss_scale", loss_scale, 1e-3, 2.0);
  require_in_range("scale_search_min", scale_search_min, 0.0, 10.0);
  require_in_range("scale_search_max", scale_search_max, scale_search_min + 1e-6, 20.0);
  if (max_iterations < 1)
    throw InvalidInput("max_iterations = " + std::to_string(max_iterations) + " must be positive");
}

const char* to_string(CalibrationStatus status) {
  switch (status) {
    case CalibrationStatus::kConverged:
      return "converged";
    case CalibrationStatus::kNoConvergence:
      return "no convergence";
    case CalibrationStatus::kNoData:
      return "no calibrator data";
    case CalibrationStatus::kSolverFailure:
      return "solver failure";
  }
  return "unknown";
}

std::string CalibrationResult::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": scale " << scale << " +/- " << scale_sigma << ", " << rows_used
      << " phase rows (" << rows_skipped << " skipped)";
  if (segment_scale.size() > 1) out << ", " << segment_scale.size() << " segments";
  out << ", " << iterations << " iterations";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

struct Row {
  double phase_rad;
  double k_rad_per_mm;  // 2 pi f / c * dispersion factor, per mm of path
  double path_a_mm, path_b_mm;
  std::size_t a, b, scan, segment;
};

// Chord residual of one baseline phase: (cos obs - cos model, sin obs - sin model).
struct PhaseResidual {
  PhaseResidual(const Row& row) : row_(row) {}
  template <typename T>
  bool operator()(const T* segment_scale,
                  const T* ratio_a,
                  const T* ratio_b,
                  const T* offset_a,
                  const T* offset_b,
                  T* residual) const {
    const T model = row_.k_rad_per_mm * segment_scale[0] *
                        (ratio_b[0] * row_.path_b_mm - ratio_a[0] * row_.path_a_mm) +
                    offset_b[0] - offset_a[0];
    residual[0] = std::cos(row_.phase_rad) - cos(model);
    residual[1] = std::sin(row_.phase_rad) - sin(model);
    return true;
  }
  Row row_;
};

struct RatioPrior {
  explicit RatioPrior(double sigma) : sigma_(sigma) {}
  template <typename T>
  bool operator()(const T* ratio, T* residual) const {
    residual[0] = (ratio[0] - 1.0) / sigma_;
    return true;
  }
  double sigma_;
};

double interpolate_path(const AntennaPaths& paths, std::size_t antenna, double t, bool& ok) {
  const std::vector<double>& times = paths.time_s;
  const std::size_t nt = times.size();
  auto it = std::lower_bound(times.begin(), times.end(), t);
  ok = false;
  if (it == times.end()) return 0.0;
  std::size_t j = static_cast<std::size_t>(it - times.begin());
  const double* path = &paths.path_mm[antenna * nt];
  if (*it == t) {
    ok = std::isfinite(path[j]);
    return path[j];
  }
  if (j == 0) return 0.0;
  const double f = (t - times[j - 1]) / (times[j] - times[j - 1]);
  const double value = (1 - f) * path[j - 1] + f * path[j];
  ok = std::isfinite(value);
  return value;
}

// Sum over (scan, pair) groups of n - |sum exp(i theta)|: the 1 - cos cost with each group's
// offset at its circular-mean optimum. Also returns the optimum offsets of reference pairs.
double closed_form_cost(const std::vector<Row>& rows,
                        double scale,
                        std::map<std::pair<std::size_t, std::pair<std::size_t, std::size_t>>,
                                 std::pair<double, double>>& sums) {
  sums.clear();
  for (const Row& r : rows) {
    const double theta = r.phase_rad - r.k_rad_per_mm * scale * (r.path_b_mm - r.path_a_mm);
    auto& s = sums[{r.scan, {r.a, r.b}}];
    s.first += std::cos(theta);
    s.second += std::sin(theta);
  }
  double cost = static_cast<double>(rows.size());
  for (const auto& [key, s] : sums) cost -= std::hypot(s.first, s.second);
  return cost;
}

}  // namespace

CalibrationResult solve_scaling(const Night& night,
                                const AntennaPaths& paths,
                                const PhasePerPath& phase_per_path,
                                const CalibrationOptions& options) {
  options.validate();
  const std::size_t na = night.antenna_count();
  if (paths.antennas != na || paths.path_mm.size() != na * paths.time_s.size()) {
    throw InvalidInput("paths: " + std::to_string(paths.antennas) + " antennas x " +
                       std::to_string(paths.time_s.size()) + " times do not match the night's " +
                       std::to_string(na) + " antennas");
  }
  const std::size_t ref = static_cast<std::size_t>(options.reference_antenna);
  if (ref >= na) {
    throw InvalidInput("reference_antenna = " + std::to_string(ref) +
                       " is not an antenna index below " + std::to_string(na));
  }
  CalibrationResult result;
  result.antenna_scale.assign(na, 1.0);
  result.antenna_scale_sigma.assign(na, 0.0);

  // Calibrator scans and rows.
  std::vector<std::size_t> calibrator_scans;
  for (std::size_t s = 0; s < night.scans.size(); ++s) {
    if (night.scans[s].intent == ScanIntent::kCalibrator) calibrator_scans.push_back(s);
  }
  const CalibratorPhases& cp = night.calibrator_phases;
  const double t0 = paths.time_s.empty() ? 0.0 : paths.time_s.front();
  std::map<double, double> k_cache;
  std::vector<Row> rows;
  std::size_t scan_cursor = 0;
  for (std::size_t i = 0; i < cp.time_s.size(); ++i) {
    const double t = cp.time_s[i];
    const auto [ia, ib] = cp.antenna_pair[i];
    bool usable = ia >= 0 && ib >= 0 && static_cast<std::size_t>(ia) < na &&
                  static_cast<std::size_t>(ib) < na && ia != ib && std::isfinite(cp.phase_rad[i]) &&
                  cp.freq_ghz[i] > 0.0 && std::isfinite(cp.freq_ghz[i]);
    // The calibrator scan holding t (rows are sorted by time).
    while (scan_cursor < calibrator_scans.size() &&
           night.scans[calibrator_scans[scan_cursor]].stop_s <= t)
      ++scan_cursor;
    if (scan_cursor >= calibrator_scans.size() ||
        t < night.scans[calibrator_scans[scan_cursor]].start_s)
      usable = false;
    Row row{};
    if (usable) {
      bool ok_a = false, ok_b = false;
      row.a = static_cast<std::size_t>(ia);
      row.b = static_cast<std::size_t>(ib);
      row.path_a_mm = interpolate_path(paths, row.a, t, ok_a);
      row.path_b_mm = interpolate_path(paths, row.b, t, ok_b);
      usable = ok_a && ok_b;
    }
    if (!usable) {
      ++result.rows_skipped;
      continue;
    }
    auto k = k_cache.find(cp.freq_ghz[i]);
    if (k == k_cache.end()) {
      const double factor = phase_per_path(cp.freq_ghz[i]);
      k = k_cache
              .emplace(cp.freq_ghz[i], kTwoPi * cp.freq_ghz[i] * 1e9 /
                                           constants::speed_of_light_m_per_s * 1e-3 * factor)
              .first;
    }
    row.k_rad_per_mm = k->second;
    row.phase_rad = cp.phase_rad[i];
    row.scan = scan_cursor;
    row.segment =
        options.segment_s > 0.0
            ? static_cast<std::size_t>(std::max(0.0, std::floor((t - t0) / options.segment_s)))
            : 0;
    rows.push_back(row);
  }
  result.rows_used = rows.size();
  if (rows.empty()) {
    result.message = calibrator_scans.empty() ? "the night has no calibrator scans"
                                              : "no usable calibrator phase rows";
    return result;
  }

  // Grid search of the array scale with closed-form offsets.
  std::map<std::pair<std::size_t, std::pair<std::size_t, std::size_t>>, std::pair<double, double>>
      sums;
  double best_scale = 1.0, best_cost = std::numeric_limits<double>::infinity();
  for (double s = options.scale_search_min; s <= options.scale_search_max + 1e-12; s += 0.01) {
    const double cost = closed_form_cost(rows, s, sums);
    if (cost < best_cost) {
      best_cost = cost;
      best_scale = s;
    }
  }
  closed_form_cost(rows, best_scale, sums);

  // Parameters. Only segments holding rows get a scale (a segment shorter than the calibrator
  // cycle can fall entirely within target scans); they are renumbered in time order.
  std::map<std::size_t, std::size_t> segment_index;
  for (const Row& r : rows) segment_index.emplace(r.segment, 0);
  std::vector<std::size_t> segment_number;
  for (auto& [number, index] : segment_index) {
    index = segment_number.size();
    segment_number.push_back(number);
  }
  for (Row& r : rows) r.segment = segment_index.at(r.segment);
  const std::size_t segments = segment_number.size();
  std::vector<double> segment_scale(segments, best_scale);
  std::vector<double> ratio(na, 1.0);
  std::map<std::pair<std::size_t, std::size_t>, double> offsets;  // (scan, antenna), antenna != ref
  double zero = 0.0;
  for (const Row& r : rows) {
    for (std::size_t ant : {r.a, r.b}) {
      if (ant != ref) offsets.emplace(std::make_pair(r.scan, ant), 0.0);
    }
  }
  for (const auto& [key, s] : sums) {
    const auto& [scan, pair] = key;
    if (pair.first == ref && pair.second != ref)
      offsets[{scan, pair.second}] = std::atan2(s.second, s.first);
    if (pair.second == ref && pair.first != ref)
      offsets[{scan, pair.first}] = -std::atan2(s.second, s.first);
  }

  // Each row is one phase: fewer rows than free parameters (a scale per segment, an offset per
  // calibrator scan and antenna) leave the solve undetermined, and its zero residual would read
  // as a perfect fit.
  const std::size_t free_parameters = segments + offsets.size();
  if (rows.size() <= free_parameters) {
    result.message = std::to_string(rows.size()) +
                     " usable calibrator phase rows cannot determine " +
                     std::to_string(free_parameters) +
                     " parameters (a scale per segment, a phase offset per scan and antenna)";
    return result;
  }

  ceres::Problem problem;
  ceres::LossFunction* loss = new ceres::CauchyLoss(options.loss_scale);
  auto offset_block = [&](std::size_t scan, std::size_t ant) -> double* {
    return ant == ref ? &zero : &offsets.at({scan, ant});
  };
  for (const Row& r : rows) {
    auto* cost =
        new ceres::AutoDiffCostFunction<PhaseResidual, 2, 1, 1, 1, 1, 1>(new PhaseResidual(r));
    problem.AddResidualBlock(cost, loss, &segment_scale[r.segment], &ratio[r.a], &ratio[r.b],
                             offset_block(r.scan, r.a), offset_block(r.scan, r.b));
  }
  problem.SetParameterBlockConstant(&zero);
  for (std::size_t a = 0; a < na; ++a) {
    if (!problem.HasParameterBlock(&ratio[a])) continue;
    if (options.per_antenna_scale) {
      problem.AddResidualBlock(new ceres::AutoDiffCostFunction<RatioPrior, 1, 1>(
                                   new RatioPrior(options.antenna_scale_prior_sigma)),
                               nullptr, &ratio[a]);
    } else {
      problem.SetParameterBlockConstant(&ratio[a]);
    }
  }
  ceres::Solver::Options solver_options;
  solver_options.linear_solver_type = ceres::SPARSE_NORMAL_CHOLESKY;
  solver_options.max_num_iterations = options.max_iterations;
  solver_options.logging_type = ceres::SILENT;
  solver_options.num_threads = 2;
  solver_options.function_tolerance = 1e-10;
  solver_options.parameter_tolerance = 1e-10;
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);
  result.iterations = static_cast<int>(summary.iterations.size());
  result.final_cost = summary.final_cost;
  if (summary.termination_type == ceres::CONVERGENCE) {
    result.status = CalibrationStatus::kConverged;
  } else if (summary.termination_type == ceres::NO_CONVERGENCE) {
    result.status = CalibrationStatus::kNoConvergence;
    result.message = "iteration limit reached";
  } else {
    result.status = CalibrationStatus::kSolverFailure;
    result.message = summary.message;
    return result;
  }

  // Uncertainties of the scale blocks, offsets marginalised.
  ceres::Covariance::Options covariance_options;
  covariance_options.algorithm_type = ceres::SPARSE_QR;
  covariance_options.num_threads = 2;
  ceres::Covariance covariance(covariance_options);
  std::vector<std::pair<const double*, const double*>> blocks;
  for (double& s : segment_scale) blocks.emplace_back(&s, &s);
  if (options.per_antenna_scale) {
    for (std::size_t a = 0; a < na; ++a) {
      if (!problem.HasParameterBlock(&ratio[a])) continue;
      blocks.emplace_back(&ratio[a], &ratio[a]);
      for (double& s : segment_scale) blocks.emplace_back(&s, &ratio[a]);
    }
  }
  const bool have_covariance = covariance.Compute(blocks, &problem);
  auto cov = [&](const double* x, const double* y) {
    double value = std::nan("");
    if (have_covariance) covariance.GetCovarianceBlock(x, y, &value);
    return value;
  };
  if (!have_covariance)
    result.message +=
        (result.message.empty() ? "" : "; ") + std::string("covariance not available");

  // NaN (no covariance) stays NaN: std::max(0.0, NaN) would report a zero uncertainty.
  auto standard_deviation = [](double variance) {
    return std::isnan(variance) ? variance : std::sqrt(std::max(0.0, variance));
  };
  for (std::size_t s = 0; s < segments; ++s) {
    result.segment_start_s.push_back(t0 +
                                     options.segment_s * static_cast<double>(segment_number[s]));
    result.segment_scale.push_back(segment_scale[s]);
    result.segment_scale_sigma.push_back(
        standard_deviation(cov(&segment_scale[s], &segment_scale[s])));
  }
  result.scale = segment_scale[0];
  result.scale_sigma = result.segment_scale_sigma[0];
  for (std::size_t a = 0; a < na; ++a) {
    result.antenna_scale[a] = segment_scale[0] * ratio[a];
    if (!options.per_antenna_scale || !problem.HasParameterBlock(&ratio[a])) {
      result.antenna_scale_sigma[a] = result.scale_sigma;
      continue;
    }
    // s_a = S r_a: first-order propagation with the S-r_a correlation.
    const double vs = cov(&segment_scale[0], &segment_scale[0]);
    const double vr = cov(&ratio[a], &ratio[a]);
    const double csr = cov(&segment_scale[0], &ratio[a]);
    const double var = ratio[a] * ratio[a] * vs + segment_scale[0] * segment_scale[0] * vr +
                       2.0 * segment_scale[0] * ratio[a] * csr;
    result.antenna_scale_sigma[a] = standard_deviation(var);
  }
  return result;
}

}  // namespace wvr
