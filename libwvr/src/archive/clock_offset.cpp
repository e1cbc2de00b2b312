// Radiometer-versus-correlator clock offsets. The atmosphere moves calibrator phases and
// radiometer brightness together; a clock offset shifts one series against the other, so the
// lag at which the brightness best explains the phases measures it. Per (baseline, calibrator
// scan) means are removed from both sides (scan offsets and the slow mean carry no timing), and
// one linear coefficient per channel maps brightness differences to phase.
#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>

#include "wvr/error.hpp"
#include "wvr/measurement_set.hpp"

namespace wvr {
namespace {

constexpr std::size_t kMaxRows = 20000;  // rows used (evenly thinned beyond this)

struct Row {
  std::size_t a = 0, b = 0, group = 0;
  double time_s = 0.0, phase_rad = 0.0;
};

// Brightness of antenna a at time t (linear between valid neighbours); false when unavailable.
bool brightness_at(const Night& night, std::size_t a, double t, double* out) {
  const auto& time = night.radiometer.time_s;
  const std::size_t nt = time.size(), nc = night.channel_count();
  auto it = std::lower_bound(time.begin(), time.end(), t);
  if (it == time.end()) return false;
  const std::size_t j = static_cast<std::size_t>(it - time.begin());
  const double* bj = night.radiometer.brightness_k.data() + (a * nt + j) * nc;
  if (*it == t) {
    if (!night.radiometer.valid[a * nt + j]) return false;
    std::copy(bj, bj + nc, out);
    return true;
  }
  if (j == 0 || !night.radiometer.valid[a * nt + j] || !night.radiometer.valid[a * nt + j - 1])
    return false;
  const double f = (t - time[j - 1]) / (time[j] - time[j - 1]);
  const double* bi = bj - nc;
  for (std::size_t c = 0; c < nc; ++c) out[c] = (1 - f) * bi[c] + f * bj[c];
  return true;
}

// Detrended calibrator rows (phase minus its (baseline, scan) circular mean).
std::vector<Row> calibrator_rows(const Night& night, std::size_t* groups) {
  const CalibratorPhases& cp = night.calibrator_phases;
  std::vector<Row> rows;
  std::map<std::tuple<int, int, std::size_t>, std::size_t> group_index;
  std::size_t scan = 0;
  for (std::size_t r = 0; r < cp.time_s.size(); ++r) {
    const double t = cp.time_s[r];
    while (scan < night.scans.size() && night.scans[scan].stop_s <= t) ++scan;
    if (scan >= night.scans.size() || night.scans[scan].intent != ScanIntent::kCalibrator ||
        t < night.scans[scan].start_s || !std::isfinite(cp.phase_rad[r]))
      continue;
    const auto [a, b] = cp.antenna_pair[r];
    auto [it, inserted] = group_index.try_emplace({a, b, scan}, group_index.size());
    rows.push_back(
        {static_cast<std::size_t>(a), static_cast<std::size_t>(b), it->second, t, cp.phase_rad[r]});
  }
  std::vector<std::complex<double>> mean(group_index.size());
  for (const Row& row : rows) mean[row.group] += std::polar(1.0, row.phase_rad);
  for (Row& row : rows)
    row.phase_rad = std::remainder(row.phase_rad - std::arg(mean[row.group]), 2 * std::numbers::pi);
  if (rows.size() > kMaxRows) {
    std::vector<Row> thinned;
    const double step = static_cast<double>(rows.size()) / static_cast<double>(kMaxRows);
    for (std::size_t i = 0; i < kMaxRows; ++i)
      thinned.push_back(rows[static_cast<std::size_t>(static_cast<double>(i) * step)]);
    rows = std::move(thinned);
  }
  *groups = group_index.size();
  return rows;
}

// Residual sum of squares of the per-channel linear fit for the given antenna lags, over the
// rows marked usable; rows without brightness at these lags are cleared from `usable`.
double misfit(const Night& night,
              const std::vector<Row>& rows,
              std::size_t groups,
              const std::vector<double>& lag_s,
              std::vector<std::uint8_t>& usable) {
  const std::size_t nc = night.channel_count();
  Eigen::MatrixXd x(rows.size(), nc);
  std::vector<double> ba(nc), bb(nc);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const Row& r = rows[i];
    if (!usable[i]) continue;
    if (!brightness_at(night, r.a, r.time_s + lag_s[r.a], ba.data()) ||
        !brightness_at(night, r.b, r.time_s + lag_s[r.b], bb.data())) {
      usable[i] = 0;
      continue;
    }
    for (std::size_t c = 0; c < nc; ++c)
      x(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(c)) = bb[c] - ba[c];
  }
  Eigen::MatrixXd group_sum = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(groups), nc);
  std::vector<double> y_sum(groups, 0.0), count(groups, 0.0);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (!usable[i]) continue;
    group_sum.row(static_cast<Eigen::Index>(rows[i].group)) += x.row(static_cast<Eigen::Index>(i));
    y_sum[rows[i].group] += rows[i].phase_rad;
    count[rows[i].group] += 1;
  }
  Eigen::MatrixXd normal = Eigen::MatrixXd::Zero(nc, nc);
  Eigen::VectorXd rhs = Eigen::VectorXd::Zero(nc);
  double yy = 0.0;
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (!usable[i]) continue;
    const std::size_t g = rows[i].group;
    const Eigen::RowVectorXd xi = x.row(static_cast<Eigen::Index>(i)) -
                                  group_sum.row(static_cast<Eigen::Index>(g)) / count[g];
    const double yi = rows[i].phase_rad - y_sum[g] / count[g];
    normal += xi.transpose() * xi;
    rhs += xi.transpose() * yi;
    yy += yi * yi;
  }
  const Eigen::VectorXd coef = normal.ldlt().solve(rhs);
  return yy - coef.dot(rhs);
}

// Best lag of `antennas` (all others at their lag_s) on a grid of whole sample intervals,
// refined by a parabola. Whole intervals only: at fractional lags the interpolation averages
// radiometer noise away, which would favour them.
ClockOffset search(const Night& night,
                   const std::vector<Row>& rows,
                   std::size_t groups,
                   std::vector<double> lag_s,
                   const std::vector<std::size_t>& antennas,
                   double halfwidth_s,
                   double lag_step_s) {
  const int steps = std::max(2, static_cast<int>(std::round(halfwidth_s / lag_step_s)));
  std::vector<std::uint8_t> usable(rows.size(), 0);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const bool involved =
        std::find(antennas.begin(), antennas.end(), rows[i].a) != antennas.end() ||
        std::find(antennas.begin(), antennas.end(), rows[i].b) != antennas.end();
    usable[i] = involved ? 1 : 0;
  }
  auto set_lag = [&](double lag) {
    for (std::size_t a : antennas) lag_s[a] = lag;
  };
  // Rows usable at every lag, so that every misfit sums over the same rows.
  for (int s = -steps; s <= steps; ++s) {
    set_lag(s * lag_step_s);
    misfit(night, rows, groups, lag_s, usable);
  }
  const std::size_t n = static_cast<std::size_t>(std::count(usable.begin(), usable.end(), 1));
  const std::size_t nc = night.channel_count();
  ClockOffset result;
  result.rows = n;
  if (n < 4 * nc + 10) return result;
  std::vector<double> rss;
  for (int s = -steps; s <= steps; ++s) {
    set_lag(s * lag_step_s);
    rss.push_back(misfit(night, rows, groups, lag_s, usable));
  }
  const std::size_t best =
      static_cast<std::size_t>(std::min_element(rss.begin(), rss.end()) - rss.begin());
  if (best == 0 || best + 1 == rss.size()) return result;  // minimum on the edge: no estimate
  const double r0 = rss[best - 1], r1 = rss[best], r2 = rss[best + 1];
  const double curvature = (r0 - 2 * r1 + r2) / (lag_step_s * lag_step_s);
  if (!(curvature > 0)) return result;
  const double shift = 0.5 * lag_step_s * (r0 - r2) / (r0 - 2 * r1 + r2);
  const double lag = (static_cast<double>(best) - steps) * lag_step_s + shift;
  const double rss_min = r1 - 0.25 * (r0 - r2) * shift / lag_step_s;
  const double noise_var = std::max(rss_min, 0.0) / static_cast<double>(n - nc);
  result.offset_s = lag;
  result.sigma_s = std::sqrt(2.0 * noise_var / curvature);
  result.estimated = true;
  return result;
}

}  // namespace

std::vector<ClockOffset> estimate_clock_offsets(const Night& night,
                                                double halfwidth_s,
                                                bool per_antenna) {
  if (!std::isfinite(halfwidth_s) || halfwidth_s <= 0.0 || halfwidth_s > 600.0)
    throw InvalidInput(describe_value("clock search halfwidth_s", halfwidth_s) +
                       " is outside (0, 600] s");
  const std::size_t na = night.antenna_count();
  std::vector<double> steps(night.time_count() > 1 ? night.time_count() - 1 : 0);
  for (std::size_t k = 0; k < steps.size(); ++k)
    steps[k] = night.radiometer.time_s[k + 1] - night.radiometer.time_s[k];
  if (steps.empty()) return std::vector<ClockOffset>(na);
  std::nth_element(steps.begin(), steps.begin() + steps.size() / 2, steps.end());
  const double cadence_s = steps[steps.size() / 2];
  std::size_t groups = 0;
  const std::vector<Row> rows = calibrator_rows(night, &groups);
  std::vector<std::size_t> all(na);
  for (std::size_t a = 0; a < na; ++a) all[a] = a;
  const ClockOffset common =
      search(night, rows, groups, std::vector<double>(na, 0.0), all, halfwidth_s, cadence_s);
  std::vector<ClockOffset> out(na, common);
  if (!per_antenna || !common.estimated) return out;
  for (std::size_t a = 0; a < na; ++a) {
    const ClockOffset own = search(night, rows, groups, std::vector<double>(na, common.offset_s),
                                   {a}, halfwidth_s, cadence_s);
    if (own.estimated) out[a] = own;
  }
  return out;
}

void apply_clock_offsets(Night& night, const std::vector<ClockOffset>& offsets) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  if (offsets.size() != na)
    throw InvalidInput("clock offsets: " + std::to_string(offsets.size()) + " values for " +
                       std::to_string(na) + " antennas");
  for (std::size_t a = 0; a < na; ++a) {
    const double offset = offsets[a].offset_s;
    if (offset == 0.0) continue;
    require_finite("clock offset_s", offset);
    std::vector<double> shifted(nt * nc, std::nan(""));
    std::vector<std::uint8_t> valid(nt, 0);
    for (std::size_t k = 0; k < nt; ++k)
      valid[k] =
          brightness_at(night, a, night.radiometer.time_s[k] + offset, &shifted[k * nc]) ? 1 : 0;
    for (std::size_t k = 0; k < nt; ++k) {
      night.radiometer.valid[a * nt + k] = valid[k];
      for (std::size_t c = 0; c < nc; ++c)
        night.radiometer.brightness_k[(a * nt + k) * nc + c] =
            valid[k] ? shifted[k * nc + c] : std::nan("");
    }
  }
}

}  // namespace wvr
