#include "correction/scaling_solver.hpp"

#include <Eigen/Cholesky>
#include <algorithm>
#include <cmath>
#include <limits>

namespace wvr::detail {

namespace {

// Damping of a parameter is its diagonal entry of J^T W J clamped to this range, times
// 1 / radius (Levenberg-Marquardt with Marquardt's scaling; the clamp keeps a parameter that
// the rows barely touch from going undamped).
constexpr double kMinDiagonal = 1e-6;
constexpr double kMaxDiagonal = 1e32;
// Offsets and common phases of a scan whose rows never reach the reference antenna can all
// shift together without changing any residual. This relative ridge on their diagonal fixes
// that direction; since no global parameter moves with it, the global solution and covariance
// change by about the ridge's size relative (1e-10).
constexpr double kLocalRidge = 1e-10;
// Trust region (as 1 / damping): start, bounds, and the least ratio of actual to predicted
// decrease that accepts a step.
constexpr double kInitialRadius = 1e4;
constexpr double kMaxRadius = 1e16;
constexpr double kMinRadius = 1e-32;
constexpr double kMinRelativeDecrease = 1e-3;

double clamped(double diagonal) { return std::clamp(diagonal, kMinDiagonal, kMaxDiagonal); }

// Derivatives of a row's model phase with respect to its parameters.
struct BaselineDerivatives {
  double scale, ratio_a, ratio_b;  // offsets: -1 (a) and +1 (b)
};
BaselineDerivatives derivatives(const Row& r, const ScalingParameters& p) {
  const double s = p.segment_scale[r.segment];
  const double k = r.k_rad_per_mm;
  return {k * (p.ratio[r.b] * r.path_b_mm - p.ratio[r.a] * r.path_a_mm), -k * s * r.path_a_mm,
          k * s * r.path_b_mm};
}
struct AntennaDerivatives {
  double scale, ratio;  // offset and common phase: +1
};
AntennaDerivatives derivatives(const AntennaRow& r, const ScalingParameters& p) {
  const double k = r.k_rad_per_mm;
  return {k * p.ratio[r.antenna] * r.path_mm, k * p.segment_scale[r.segment] * r.path_mm};
}

double model_rad(const Row& r, const ScalingParameters& p, std::size_t antennas) {
  const double* offsets = &p.offsets[std::size_t{r.scan} * antennas];
  return r.k_rad_per_mm * p.segment_scale[r.segment] *
             (p.ratio[r.b] * r.path_b_mm - p.ratio[r.a] * r.path_a_mm) +
         offsets[r.b] - offsets[r.a];
}
double model_rad(const AntennaRow& r, const ScalingParameters& p, std::size_t antennas) {
  return r.k_rad_per_mm * p.segment_scale[r.segment] * p.ratio[r.antenna] * r.path_mm +
         p.offsets[std::size_t{r.scan} * antennas + r.antenna] + p.common[r.integration];
}

}  // namespace

struct ScalingSolver::Linearisation {
  // Per row, at one point: the reweighted row weight w rho'(s) and the gradient of the cost
  // with respect to the row's model phase, w rho'(s) sin(model - observed).
  std::vector<double> weight, gradient;
  std::vector<double> antenna_weight, antenna_gradient;
};

struct ScalingSolver::Step {
  // Per scan, for back-substitution: the Cholesky factor L of its offsets' block (common
  // phases eliminated), W = L^-1 C (C: offsets x the scan's globals) and y = L^-1 rhs.
  std::vector<Eigen::MatrixXd> factor, coupling;
  std::vector<Eigen::VectorXd> reduced_rhs;
  // Per reduced integration: its common phase's damped diagonal entry and right-hand side.
  std::vector<double> common_diagonal, common_rhs;
};

ScalingSolver::ScalingSolver(const ScalingRows& rows, const ScalingSolveSettings& settings)
    : rows_(rows), settings_(settings) {
  const std::size_t na = settings.antennas;
  const std::size_t scans = rows.scans;
  // Globals: segment scales, then the free ratios.
  globals_ = rows.segments;
  ratio_global_.assign(na, -1);
  if (settings.per_antenna) {
    std::vector<char> used(na, 0);
    for (const Row& r : rows.rows) used[r.a] = used[r.b] = 1;
    for (const AntennaRow& r : rows.antenna_rows) used[r.antenna] = 1;
    for (std::size_t a = 0; a < na; ++a)
      if (used[a]) ratio_global_[a] = static_cast<std::ptrdiff_t>(globals_++);
  }
  // Compressed lists by counting.
  auto compress = [](std::size_t groups, std::size_t items, auto group_of,
                     std::vector<std::size_t>& start, std::vector<std::size_t>& members) {
    start.assign(groups + 1, 0);
    for (std::size_t i = 0; i < items; ++i) ++start[group_of(i) + 1];
    for (std::size_t g = 0; g < groups; ++g) start[g + 1] += start[g];
    std::vector<std::size_t> fill(start.begin(), start.end() - 1);
    members.resize(items);
    for (std::size_t i = 0; i < items; ++i) members[fill[group_of(i)]++] = i;
  };
  const std::size_t integrations = rows.integrations.size();
  compress(
      scans, rows.rows.size(), [&](std::size_t i) { return rows.rows[i].scan; }, scan_row_start_,
      scan_rows_);
  compress(
      integrations, rows.antenna_rows.size(),
      [&](std::size_t i) { return rows.antenna_rows[i].integration; }, integration_row_start_,
      integration_rows_);
  std::vector<std::size_t> integration_scan(integrations, 0);
  for (const AntennaRow& r : rows.antenna_rows) integration_scan[r.integration] = r.scan;
  compress(
      scans, integrations, [&](std::size_t n) { return integration_scan[n]; },
      scan_integration_start_, scan_integrations_);
  // Each scan's free offsets and globals.
  offset_free_.assign(scans * na, 0);
  scan_offset_start_.assign(1, 0);
  scan_global_start_.assign(1, 0);
  std::vector<char> global_used(globals_, 0);
  for (std::size_t scan = 0; scan < scans; ++scan) {
    char* free = &offset_free_[scan * na];
    auto touch = [&](std::size_t antenna, std::size_t segment) {
      if (antenna != settings.reference) free[antenna] = 1;
      global_used[segment] = 1;
      if (ratio_global_[antenna] >= 0)
        global_used[static_cast<std::size_t>(ratio_global_[antenna])] = 1;
    };
    for (std::size_t k = scan_row_start_[scan]; k < scan_row_start_[scan + 1]; ++k) {
      const Row& r = rows.rows[scan_rows_[k]];
      touch(r.a, r.segment);
      touch(r.b, r.segment);
    }
    for (std::size_t k = scan_integration_start_[scan]; k < scan_integration_start_[scan + 1];
         ++k) {
      const std::size_t n = scan_integrations_[k];
      for (std::size_t j = integration_row_start_[n]; j < integration_row_start_[n + 1]; ++j) {
        const AntennaRow& r = rows.antenna_rows[integration_rows_[j]];
        touch(r.antenna, r.segment);
      }
    }
    for (std::size_t a = 0; a < na; ++a)
      if (free[a]) scan_offset_antennas_.push_back(a);
    for (std::size_t g = 0; g < globals_; ++g) {
      if (global_used[g]) scan_globals_.push_back(g);
      global_used[g] = 0;
    }
    scan_offset_start_.push_back(scan_offset_antennas_.size());
    scan_global_start_.push_back(scan_globals_.size());
  }
}

double ScalingSolver::prior_cost(const ScalingParameters& p) const {
  double cost = 0.0;
  for (std::size_t a = 0; a < settings_.antennas; ++a) {
    if (!ratio_free(a)) continue;
    const double z = (p.ratio[a] - 1.0) / settings_.ratio_prior_sigma;
    cost += 0.5 * z * z;
  }
  return cost;
}

double ScalingSolver::evaluate(const ScalingParameters& p, Linearisation* out) const {
  const double b = settings_.loss_scale * settings_.loss_scale;
  const std::size_t na = settings_.antennas;
  if (out != nullptr) {
    out->weight.resize(rows_.rows.size());
    out->gradient.resize(rows_.rows.size());
    out->antenna_weight.resize(rows_.antenna_rows.size());
    out->antenna_gradient.resize(rows_.antenna_rows.size());
  }
  // |e^i phi - e^i m|^2 = 2 - 2 cos(m - phi); Cauchy rho(s) = b log(1 + s / b).
  double cost = 0.0;
  auto add = [&](double difference_rad, double weight, double* row_weight, double* row_gradient) {
    const double s = 2.0 - 2.0 * std::cos(difference_rad);
    cost += weight * b * std::log1p(s / b);
    if (row_weight != nullptr) {
      const double w = weight / (1.0 + s / b);
      *row_weight = w;
      *row_gradient = w * std::sin(difference_rad);
    }
  };
  for (std::size_t i = 0; i < rows_.rows.size(); ++i) {
    const Row& r = rows_.rows[i];
    add(model_rad(r, p, na) - r.phase_rad, 1.0, out ? &out->weight[i] : nullptr,
        out ? &out->gradient[i] : nullptr);
  }
  for (std::size_t i = 0; i < rows_.antenna_rows.size(); ++i) {
    const AntennaRow& r = rows_.antenna_rows[i];
    add(model_rad(r, p, na) - r.phase_rad, rows_.integrations[r.integration].weight,
        out ? &out->antenna_weight[i] : nullptr, out ? &out->antenna_gradient[i] : nullptr);
  }
  return 0.5 * cost;
}

double ScalingSolver::data_cost(const ScalingParameters& p) const { return evaluate(p, nullptr); }

bool ScalingSolver::reduced_system(const ScalingParameters& p,
                                   const Linearisation& lin,
                                   double damping,
                                   Eigen::MatrixXd& global_matrix,
                                   Eigen::VectorXd& global_rhs,
                                   Step* step) const {
  const std::size_t na = settings_.antennas;
  const std::size_t scans = rows_.scans;
  const std::ptrdiff_t none = -1;
  global_matrix.setZero(static_cast<Eigen::Index>(globals_), static_cast<Eigen::Index>(globals_));
  global_rhs.setZero(static_cast<Eigen::Index>(globals_));
  Eigen::VectorXd global_diagonal = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(globals_));
  if (step != nullptr) {
    step->factor.resize(scans);
    step->coupling.resize(scans);
    step->reduced_rhs.resize(scans);
    step->common_diagonal.resize(rows_.integrations.size());
    step->common_rhs.resize(rows_.integrations.size());
  }
  // Local index of each antenna's offset and each global parameter within the current scan.
  std::vector<std::ptrdiff_t> offset_local(na, none), global_local(globals_, none);
  Eigen::MatrixXd block;
  Eigen::VectorXd rhs, v;
  for (std::size_t scan = 0; scan < scans; ++scan) {
    const std::size_t m = scan_offset_start_[scan + 1] - scan_offset_start_[scan];
    const std::size_t q = scan_global_start_[scan + 1] - scan_global_start_[scan];
    if (m + q == 0) continue;
    const std::size_t* offset_antennas = scan_offset_antennas_.data() + scan_offset_start_[scan];
    const std::size_t* globals = scan_globals_.data() + scan_global_start_[scan];
    for (std::size_t j = 0; j < m; ++j)
      offset_local[offset_antennas[j]] = static_cast<std::ptrdiff_t>(j);
    for (std::size_t j = 0; j < q; ++j)
      global_local[globals[j]] = static_cast<std::ptrdiff_t>(m + j);
    const auto n_local = static_cast<Eigen::Index>(m + q);
    block.setZero(n_local, n_local);  // lower triangle: offsets, then the scan's globals
    rhs.setZero(n_local);
    // A row's entries: local index and derivative of the model phase.
    std::ptrdiff_t index[5];
    double derivative[5];
    auto add_row = [&](int entries, double weight, double gradient) {
      for (int u = 0; u < entries; ++u) {
        rhs[index[u]] -= gradient * derivative[u];
        for (int w = 0; w < entries; ++w) {
          if (index[w] <= index[u])
            block(index[u], index[w]) += weight * derivative[u] * derivative[w];
        }
      }
    };
    // Appends a parameter the row touches (skipped when fixed: local index `none`).
    int entries = 0;
    auto put = [&](std::ptrdiff_t local, double value) {
      if (local == none) return;
      index[entries] = local;
      derivative[entries++] = value;
    };
    auto ratio_local = [&](std::size_t antenna) {
      return ratio_global_[antenna] < 0
                 ? none
                 : global_local[static_cast<std::size_t>(ratio_global_[antenna])];
    };
    for (std::size_t k = scan_row_start_[scan]; k < scan_row_start_[scan + 1]; ++k) {
      const std::size_t i = scan_rows_[k];
      const Row& r = rows_.rows[i];
      const BaselineDerivatives d = derivatives(r, p);
      entries = 0;
      put(global_local[r.segment], d.scale);
      put(ratio_local(r.a), d.ratio_a);
      put(ratio_local(r.b), d.ratio_b);
      put(offset_local[r.a], -1.0);
      put(offset_local[r.b], 1.0);
      add_row(entries, lin.weight[i], lin.gradient[i]);
    }
    const std::size_t* integrations = scan_integrations_.data() + scan_integration_start_[scan];
    const std::size_t integration_count =
        scan_integration_start_[scan + 1] - scan_integration_start_[scan];
    for (std::size_t k = 0; k < integration_count; ++k) {
      const std::size_t n = integrations[k];
      for (std::size_t j = integration_row_start_[n]; j < integration_row_start_[n + 1]; ++j) {
        const std::size_t i = integration_rows_[j];
        const AntennaRow& r = rows_.antenna_rows[i];
        const AntennaDerivatives d = derivatives(r, p);
        entries = 0;
        put(global_local[r.segment], d.scale);
        put(ratio_local(r.antenna), d.ratio);
        put(offset_local[r.antenna], 1.0);
        add_row(entries, lin.antenna_weight[i], lin.antenna_gradient[i]);
      }
    }
    // The diagonal is complete (before any elimination): damp the offsets, note the globals'.
    for (std::size_t j = 0; j < m; ++j) {
      const auto jj = static_cast<Eigen::Index>(j);
      block(jj, jj) += clamped(block(jj, jj)) * (damping + kLocalRidge);
    }
    for (std::size_t j = 0; j < q; ++j) {
      const auto jj = static_cast<Eigen::Index>(m + j);
      global_diagonal[static_cast<Eigen::Index>(globals[j])] += block(jj, jj);
    }
    // Eliminate each integration's common phase: block -= v v^T / h, rhs -= v rhs_c / h.
    v.resize(n_local);
    for (std::size_t k = 0; k < integration_count; ++k) {
      const std::size_t n = integrations[k];
      v.setZero();
      double h = 0.0, rhs_c = 0.0;
      for (std::size_t j = integration_row_start_[n]; j < integration_row_start_[n + 1]; ++j) {
        const std::size_t i = integration_rows_[j];
        const AntennaRow& r = rows_.antenna_rows[i];
        const double w = lin.antenna_weight[i];
        const AntennaDerivatives d = derivatives(r, p);
        h += w;
        rhs_c -= lin.antenna_gradient[i];
        v[global_local[r.segment]] += w * d.scale;
        if (const std::ptrdiff_t local = ratio_local(r.antenna); local != none)
          v[local] += w * d.ratio;
        if (const std::ptrdiff_t local = offset_local[r.antenna]; local != none) v[local] += w;
      }
      h += clamped(h) * (damping + kLocalRidge);
      block.selfadjointView<Eigen::Lower>().rankUpdate(v, -1.0 / h);
      rhs -= v * (rhs_c / h);
      if (step != nullptr) {
        step->common_diagonal[n] = h;
        step->common_rhs[n] = rhs_c;
      }
    }
    // Eliminate the offsets: with A = L L^T, W = L^-1 C, y = L^-1 rhs_o, the globals' block
    // becomes G - W^T W and their right-hand side rhs_g - W^T y.
    const auto mi = static_cast<Eigen::Index>(m), qi = static_cast<Eigen::Index>(q);
    Eigen::LLT<Eigen::MatrixXd> offsets_llt(block.topLeftCorner(mi, mi));
    if (offsets_llt.info() != Eigen::Success) return false;
    Eigen::MatrixXd coupling = block.bottomLeftCorner(qi, mi).transpose();
    offsets_llt.matrixL().solveInPlace(coupling);
    Eigen::VectorXd reduced = rhs.head(mi);
    offsets_llt.matrixL().solveInPlace(reduced);
    Eigen::MatrixXd globals_block = block.bottomRightCorner(qi, qi).selfadjointView<Eigen::Lower>();
    globals_block.noalias() -= coupling.transpose() * coupling;
    const Eigen::VectorXd globals_rhs = rhs.tail(qi) - coupling.transpose() * reduced;
    for (std::size_t u = 0; u < q; ++u) {
      const auto gu = static_cast<Eigen::Index>(globals[u]);
      global_rhs[gu] += globals_rhs[static_cast<Eigen::Index>(u)];
      for (std::size_t w = 0; w < q; ++w)
        global_matrix(gu, static_cast<Eigen::Index>(globals[w])) +=
            globals_block(static_cast<Eigen::Index>(u), static_cast<Eigen::Index>(w));
    }
    if (step != nullptr) {
      step->factor[scan] = offsets_llt.matrixL();
      step->coupling[scan] = std::move(coupling);
      step->reduced_rhs[scan] = std::move(reduced);
    }
    for (std::size_t j = 0; j < m; ++j) offset_local[offset_antennas[j]] = none;
    for (std::size_t j = 0; j < q; ++j) global_local[globals[j]] = none;
  }
  // The ratio prior, then the globals' damping.
  for (std::size_t a = 0; a < na; ++a) {
    if (!ratio_free(a)) continue;
    const auto g = static_cast<Eigen::Index>(ratio_global_[a]);
    const double inverse_variance =
        1.0 / (settings_.ratio_prior_sigma * settings_.ratio_prior_sigma);
    global_matrix(g, g) += inverse_variance;
    global_diagonal[g] += inverse_variance;
    global_rhs[g] -= (p.ratio[a] - 1.0) * inverse_variance;
  }
  for (Eigen::Index g = 0; g < global_diagonal.size(); ++g)
    global_matrix(g, g) += clamped(global_diagonal[g]) * damping;
  return global_matrix.allFinite() && global_rhs.allFinite();
}

bool ScalingSolver::compute_step(const ScalingParameters& p,
                                 const Linearisation& lin,
                                 double damping,
                                 ScalingParameters& delta,
                                 double& predicted_decrease) const {
  const std::size_t na = settings_.antennas;
  Eigen::MatrixXd global_matrix;
  Eigen::VectorXd global_rhs;
  Step step;
  if (!reduced_system(p, lin, damping, global_matrix, global_rhs, &step)) return false;
  const Eigen::LLT<Eigen::MatrixXd> global_llt(global_matrix);
  if (global_llt.info() != Eigen::Success) return false;
  const Eigen::VectorXd global_step = global_llt.solve(global_rhs);
  if (!global_step.allFinite()) return false;
  delta.segment_scale.assign(p.segment_scale.size(), 0.0);
  delta.ratio.assign(na, 0.0);
  delta.offsets.assign(p.offsets.size(), 0.0);
  delta.common.assign(p.common.size(), 0.0);
  for (std::size_t s = 0; s < rows_.segments; ++s)
    delta.segment_scale[s] = global_step[static_cast<Eigen::Index>(s)];
  for (std::size_t a = 0; a < na; ++a)
    if (ratio_free(a)) delta.ratio[a] = global_step[ratio_global_[a]];
  // Back-substitution: each scan's offsets, L^T x = y - W g, then each common phase.
  for (std::size_t scan = 0; scan < rows_.scans; ++scan) {
    const std::size_t m = scan_offset_start_[scan + 1] - scan_offset_start_[scan];
    const std::size_t q = scan_global_start_[scan + 1] - scan_global_start_[scan];
    if (m == 0) continue;
    Eigen::VectorXd scan_globals(static_cast<Eigen::Index>(q));
    for (std::size_t j = 0; j < q; ++j)
      scan_globals[static_cast<Eigen::Index>(j)] =
          global_step[static_cast<Eigen::Index>(scan_globals_[scan_global_start_[scan] + j])];
    Eigen::VectorXd x = step.reduced_rhs[scan] - step.coupling[scan] * scan_globals;
    step.factor[scan].triangularView<Eigen::Lower>().transpose().solveInPlace(x);
    for (std::size_t j = 0; j < m; ++j)
      delta.offsets[scan * na + scan_offset_antennas_[scan_offset_start_[scan] + j]] =
          x[static_cast<Eigen::Index>(j)];
  }
  for (std::size_t n = 0; n < rows_.integrations.size(); ++n) {
    double coupled = 0.0;  // v . (step of the other parameters)
    for (std::size_t j = integration_row_start_[n]; j < integration_row_start_[n + 1]; ++j) {
      const std::size_t i = integration_rows_[j];
      const AntennaRow& r = rows_.antenna_rows[i];
      const AntennaDerivatives d = derivatives(r, p);
      coupled += lin.antenna_weight[i] *
                 (d.scale * delta.segment_scale[r.segment] + d.ratio * delta.ratio[r.antenna] +
                  delta.offsets[std::size_t{r.scan} * na + r.antenna]);
    }
    delta.common[n] = (step.common_rhs[n] - coupled) / step.common_diagonal[n];
  }
  // Decrease of the Gauss-Newton model (undamped): -(g . d + 1/2 d^T H d), from each row's
  // change of model phase.
  double gradient_step = 0.0, curvature = 0.0;
  for (std::size_t i = 0; i < rows_.rows.size(); ++i) {
    const Row& r = rows_.rows[i];
    const BaselineDerivatives d = derivatives(r, p);
    const double change = d.scale * delta.segment_scale[r.segment] + d.ratio_a * delta.ratio[r.a] +
                          d.ratio_b * delta.ratio[r.b] +
                          delta.offsets[std::size_t{r.scan} * na + r.b] -
                          delta.offsets[std::size_t{r.scan} * na + r.a];
    gradient_step += lin.gradient[i] * change;
    curvature += lin.weight[i] * change * change;
  }
  for (std::size_t i = 0; i < rows_.antenna_rows.size(); ++i) {
    const AntennaRow& r = rows_.antenna_rows[i];
    const AntennaDerivatives d = derivatives(r, p);
    const double change =
        d.scale * delta.segment_scale[r.segment] + d.ratio * delta.ratio[r.antenna] +
        delta.offsets[std::size_t{r.scan} * na + r.antenna] + delta.common[r.integration];
    gradient_step += lin.antenna_gradient[i] * change;
    curvature += lin.antenna_weight[i] * change * change;
  }
  for (std::size_t a = 0; a < na; ++a) {
    if (!ratio_free(a)) continue;
    const double inverse_variance =
        1.0 / (settings_.ratio_prior_sigma * settings_.ratio_prior_sigma);
    gradient_step += (p.ratio[a] - 1.0) * inverse_variance * delta.ratio[a];
    curvature += inverse_variance * delta.ratio[a] * delta.ratio[a];
  }
  predicted_decrease = -(gradient_step + 0.5 * curvature);
  return std::isfinite(predicted_decrease);
}

ScalingSolveSummary ScalingSolver::solve(ScalingParameters& p) const {
  ScalingSolveSummary summary;
  Linearisation lin, candidate_lin;
  double cost = evaluate(p, &lin) + prior_cost(p);
  if (!std::isfinite(cost)) {
    summary.message = "the cost at the start values is not finite";
    return summary;
  }
  auto norm = [](const ScalingParameters& x) {
    double sum = 0.0;
    for (const auto* v : {&x.segment_scale, &x.ratio, &x.offsets, &x.common})
      for (double value : *v) sum += value * value;
    return std::sqrt(sum);
  };
  // Trust-region radius and its shrink factor after a rejected step (Madsen, Nielsen &
  // Tingleff (2004), Methods for Non-Linear Least Squares Problems, 2nd ed., sec. 3.2, eq.
  // 3.16: the damping update of Nielsen (1999); from memory).
  double radius = kInitialRadius, shrink = 2.0;
  ScalingParameters delta, candidate;
  summary.termination = ScalingTermination::kIterationLimit;
  summary.message = "iteration limit reached";
  while (summary.iterations < settings_.max_iterations) {
    ++summary.iterations;
    double predicted = 0.0;
    const bool stepped = compute_step(p, lin, 1.0 / radius, delta, predicted);
    bool accepted = false;
    double candidate_cost = cost;
    if (stepped) {
      if (norm(delta) <=
          settings_.parameter_tolerance * (norm(p) + settings_.parameter_tolerance)) {
        summary.termination = ScalingTermination::kConverged;
        summary.message.clear();
        break;
      }
      candidate = p;
      for (std::size_t s = 0; s < p.segment_scale.size(); ++s)
        candidate.segment_scale[s] += delta.segment_scale[s];
      for (std::size_t a = 0; a < p.ratio.size(); ++a) candidate.ratio[a] += delta.ratio[a];
      for (std::size_t k = 0; k < p.offsets.size(); ++k) candidate.offsets[k] += delta.offsets[k];
      for (std::size_t n = 0; n < p.common.size(); ++n) candidate.common[n] += delta.common[n];
      candidate_cost = evaluate(candidate, &candidate_lin) + prior_cost(candidate);
      const double decrease = cost - candidate_cost;
      accepted = std::isfinite(candidate_cost) && predicted > 0.0 &&
                 decrease / predicted > kMinRelativeDecrease;
      if (accepted) {
        const double rho = decrease / predicted;
        radius =
            std::min(kMaxRadius, radius / std::max(1.0 / 3.0, 1.0 - std::pow(2.0 * rho - 1.0, 3)));
        shrink = 2.0;
        std::swap(p, candidate);
        std::swap(lin, candidate_lin);
        const double previous = cost;
        cost = candidate_cost;
        if (std::abs(previous - cost) <= settings_.function_tolerance * std::abs(previous)) {
          summary.termination = ScalingTermination::kConverged;
          summary.message.clear();
          break;
        }
      } else if (std::isfinite(candidate_cost) &&
                 std::abs(cost - candidate_cost) <= settings_.function_tolerance * std::abs(cost)) {
        // The model promises no decrease the cost can show: at the minimum.
        summary.termination = ScalingTermination::kConverged;
        summary.message.clear();
        break;
      }
    }
    if (!accepted) {
      radius /= shrink;
      shrink *= 2.0;
      if (radius < kMinRadius) {
        summary.termination = ScalingTermination::kFailure;
        summary.message = "the trust region shrank to nothing without a decrease of the cost";
        break;
      }
    }
  }
  summary.prior_cost = prior_cost(p);
  summary.final_cost = cost;
  return summary;
}

bool ScalingSolver::global_covariance(const ScalingParameters& p,
                                      Eigen::MatrixXd& covariance) const {
  Linearisation lin;
  evaluate(p, &lin);
  Eigen::MatrixXd global_matrix;
  Eigen::VectorXd global_rhs;
  if (!reduced_system(p, lin, 0.0, global_matrix, global_rhs, nullptr)) return false;
  const Eigen::LLT<Eigen::MatrixXd> llt(global_matrix);
  if (llt.info() != Eigen::Success) return false;
  covariance = llt.solve(Eigen::MatrixXd::Identity(global_matrix.rows(), global_matrix.cols()));
  return covariance.allFinite();
}

}  // namespace wvr::detail
