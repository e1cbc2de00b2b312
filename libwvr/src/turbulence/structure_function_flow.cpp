// Temporal structure functions and frozen-flow wind from radiometer path series
// (wvr/structure_function.hpp).

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <numbers>
#include <sstream>

#include "core/parallel_for.hpp"
#include "core/simd_dispatch.hpp"
#include "turbulence/antenna_pairs.hpp"
#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {
namespace {

// A path series laid on a regular time grid at the median cadence.
struct RegularGrid {
  double step_s = 0.0;
  std::size_t length = 0;
  std::vector<std::size_t> index;  // grid index of every input sample
};

RegularGrid regular_grid(std::span<const double> time_s) {
  RegularGrid grid;
  if (time_s.size() < 2) return grid;
  std::vector<double> steps;
  steps.reserve(time_s.size() - 1);
  for (std::size_t k = 1; k < time_s.size(); ++k) {
    const double dt = time_s[k] - time_s[k - 1];
    if (!(dt > 0.0)) {
      throw InvalidInput(describe_value("paths.time_s[" + std::to_string(k) + "]", time_s[k]) +
                         " s is not after the previous sample");
    }
    steps.push_back(dt);
  }
  std::nth_element(steps.begin(), steps.begin() + static_cast<std::ptrdiff_t>(steps.size() / 2),
                   steps.end());
  grid.step_s = steps[steps.size() / 2];
  grid.index.resize(time_s.size());
  for (std::size_t k = 0; k < time_s.size(); ++k) {
    grid.index[k] = static_cast<std::size_t>(std::llround((time_s[k] - time_s[0]) / grid.step_s));
  }
  grid.length = grid.index.back() + 1;
  return grid;
}

// Antenna a's path (m) on the grid; NaN where no sample falls.
std::vector<double> regular_path_m(const AntennaPaths& paths,
                                   const RegularGrid& grid,
                                   std::size_t antenna) {
  const std::size_t nt = paths.time_s.size();
  std::vector<double> out(grid.length, std::nan(""));
  for (std::size_t k = 0; k < nt; ++k) out[grid.index[k]] = paths.path_mm[antenna * nt + k] * 1e-3;
  return out;
}

void check_shape(const AntennaPaths& paths, std::size_t expected_antennas) {
  const std::size_t nt = paths.time_s.size();
  if (paths.path_mm.size() != paths.antennas * nt || paths.antennas != expected_antennas) {
    throw InvalidInput("paths: " + std::to_string(paths.antennas) + " antennas x " +
                       std::to_string(nt) + " times with " + std::to_string(paths.path_mm.size()) +
                       " path_mm values (expected " + std::to_string(expected_antennas) +
                       " antennas)");
  }
}

// Series minus its running mean over `half` samples either side (finite samples only).
std::vector<double> highpass(const std::vector<double>& x, std::size_t half) {
  const std::size_t n = x.size();
  std::vector<double> sum(n + 1, 0.0);
  std::vector<std::size_t> count(n + 1, 0);
  for (std::size_t i = 0; i < n; ++i) {
    const bool ok = std::isfinite(x[i]);
    sum[i + 1] = sum[i] + (ok ? x[i] : 0.0);
    count[i + 1] = count[i] + (ok ? 1 : 0);
  }
  std::vector<double> out(n, std::nan(""));
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(x[i])) continue;
    const std::size_t lo = i >= half ? i - half : 0;
    const std::size_t hi = std::min(n, i + half + 1);
    const std::size_t c = count[hi] - count[lo];
    out[i] = x[i] - (sum[hi] - sum[lo]) / static_cast<double>(c);
  }
  return out;
}

// A series prepared for lagged correlations: missing samples are zeros with mask 0, so the
// sums below are plain dot products that the compiler vectorises.
struct MaskedSeries {
  std::vector<double> value;  // the sample, 0 where missing
  std::vector<double> mask;   // 1 where the sample is finite, else 0
};

MaskedSeries masked(const std::vector<double>& x) {
  MaskedSeries m{std::vector<double>(x.size(), 0.0), std::vector<double>(x.size(), 0.0)};
  for (std::size_t i = 0; i < x.size(); ++i) {
    if (std::isnan(x[i])) continue;
    m.value[i] = x[i];
    m.mask[i] = 1.0;
  }
  return m;
}

// Four doubles in one vector register (two on processors without AVX): GCC and Clang vector
// extensions, because their auto-vectoriser turns the reductions below into scalar adds.
using FourLanes = double __attribute__((vector_size(32)));

// sum x y, sum x^2 my and sum mx y^2 over n samples, accumulated in four lanes.
WVR_VECTOR_CLONES
void lagged_sums(const double* __restrict x,
                 const double* __restrict mx,
                 const double* __restrict y,
                 const double* __restrict my,
                 std::size_t n,
                 double* __restrict out) {
  FourLanes xy = {0.0, 0.0, 0.0, 0.0}, xx = xy, yy = xy;
  std::size_t t = 0;
  for (; t + 4 <= n; t += 4) {
    FourLanes xv, mxv, yv, myv;  // unaligned loads
    std::memcpy(&xv, x + t, sizeof xv);
    std::memcpy(&mxv, mx + t, sizeof mxv);
    std::memcpy(&yv, y + t, sizeof yv);
    std::memcpy(&myv, my + t, sizeof myv);
    xy += xv * yv;
    xx += xv * xv * myv;
    yy += mxv * yv * yv;
  }
  for (std::size_t k = 0; t < n; ++t, ++k) {
    xy[k] += x[t] * y[t];
    xx[k] += x[t] * x[t] * my[t];
    yy[k] += mx[t] * y[t] * y[t];
  }
  out[0] = (xy[0] + xy[1]) + (xy[2] + xy[3]);
  out[1] = (xx[0] + xx[1]) + (xx[2] + xx[3]);
  out[2] = (yy[0] + yy[1]) + (yy[2] + yy[3]);
}

// Normalised cross-correlation sum_t a(t) b(t + lag) over the overlap where both are finite.
double correlation_at(const MaskedSeries& a, const MaskedSeries& b, long lag) {
  const long n = static_cast<long>(a.value.size());
  const long start = std::max(0L, -lag), stop = std::min(n, n - lag);
  if (stop <= start) return std::nan("");
  const auto offset = [](long i) { return static_cast<std::size_t>(i); };
  double sums[3];
  lagged_sums(a.value.data() + offset(start), a.mask.data() + offset(start),
              b.value.data() + offset(start + lag), b.mask.data() + offset(start + lag),
              offset(stop - start), sums);
  const double sab = sums[0], saa = sums[1], sbb = sums[2];
  return saa > 0.0 && sbb > 0.0 ? sab / std::sqrt(saa * sbb) : std::nan("");
}

// Means of consecutive blocks of `factor` samples (NaN for a block without finite samples).
std::vector<double> block_means(const std::vector<double>& x, std::size_t factor) {
  std::vector<double> out(x.size() / factor, std::nan(""));
  for (std::size_t i = 0; i < out.size(); ++i) {
    double sum = 0.0;
    std::size_t n = 0;
    for (std::size_t k = i * factor; k < (i + 1) * factor; ++k) {
      if (std::isnan(x[k])) continue;
      sum += x[k];
      ++n;
    }
    if (n > 0) out[i] = sum / static_cast<double>(n);
  }
  return out;
}

struct PeakLag {
  double lag_samples = 0.0;  // with parabolic refinement
  double correlation = std::nan("");
  bool at_edge = false;  // the peak sits on the edge of the search range
};

// Lag (in samples of a) maximising the correlation of a(t) and b(t + lag) over |lag| <= k_max:
// a search on the block means (factor samples each), then at full resolution within two
// blocks of the coarse peak, then a parabola through the peak and its neighbours.
PeakLag find_peak_lag(const MaskedSeries& a,
                      const MaskedSeries& b,
                      const MaskedSeries& coarse_a,
                      const MaskedSeries& coarse_b,
                      std::size_t factor,
                      long k_max) {
  const long f = static_cast<long>(factor);
  long lo = -k_max, hi = k_max;
  if (f > 1) {
    const long coarse_max = (k_max + f - 1) / f;
    long best = 0;
    double best_c = -2.0;
    for (long k = -coarse_max; k <= coarse_max; ++k) {
      const double v = correlation_at(coarse_a, coarse_b, k);
      if (std::isfinite(v) && v > best_c) {
        best_c = v;
        best = k;
      }
    }
    if (best_c <= -2.0) return {};
    lo = std::max(-k_max, best * f - 2 * f);
    hi = std::min(k_max, best * f + 2 * f);
  }
  std::vector<double> c(static_cast<std::size_t>(hi - lo + 1));
  long best = lo;
  double best_c = -2.0;
  for (long k = lo; k <= hi; ++k) {
    const double v = correlation_at(a, b, k);
    c[static_cast<std::size_t>(k - lo)] = v;
    if (std::isfinite(v) && v > best_c) {
      best_c = v;
      best = k;
    }
  }
  if (best_c <= -2.0) return {};
  // A fine peak on the edge of the window (not of the search range) widens the window once.
  if (f > 1 && ((best == lo && lo > -k_max) || (best == hi && hi < k_max))) {
    const long wide_lo = std::max(-k_max, best - 2 * f), wide_hi = std::min(k_max, best + 2 * f);
    std::vector<double> wide(static_cast<std::size_t>(wide_hi - wide_lo + 1));
    for (long k = wide_lo; k <= wide_hi; ++k) {
      const double v = correlation_at(a, b, k);
      wide[static_cast<std::size_t>(k - wide_lo)] = v;
      if (std::isfinite(v) && v > best_c) {
        best_c = v;
        best = k;
      }
    }
    lo = wide_lo;
    hi = wide_hi;
    c = std::move(wide);
  }
  PeakLag peak;
  peak.correlation = best_c;
  peak.lag_samples = static_cast<double>(best);
  peak.at_edge = best <= -k_max || best >= k_max;
  if (best > lo && best < hi) {
    const double cm = c[static_cast<std::size_t>(best - 1 - lo)];
    const double cp = c[static_cast<std::size_t>(best + 1 - lo)];
    const double curvature = cm - 2.0 * best_c + cp;
    if (std::isfinite(curvature) && curvature < 0.0)
      peak.lag_samples += 0.5 * (cm - cp) / curvature;
  }
  return peak;
}

}  // namespace

std::string TemporalStructureResult::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": " << estimates.size() << " series at " << sample_interval_s
      << " s cadence";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

TemporalStructureResult temporal_path_structure(const AntennaPaths& paths,
                                                std::span<const double> lag_s,
                                                std::span<const std::array<int, 2>> pairs) {
  check_shape(paths, paths.antennas);
  const int na = static_cast<int>(paths.antennas);
  for (std::size_t i = 0; i < pairs.size(); ++i) {
    for (int a : pairs[i]) {
      if (a < 0 || a >= na) {
        throw InvalidInput("pairs[" + std::to_string(i) + "] antenna " + std::to_string(a) +
                           " is outside the paths' " + std::to_string(na) + " antennas");
      }
    }
  }
  TemporalStructureResult result;
  if (paths.time_s.size() < 2 || na == 0) {
    result.message = "fewer than two path samples";
    return result;
  }
  const RegularGrid grid = regular_grid(paths.time_s);
  result.sample_interval_s = grid.step_s;
  std::vector<std::array<int, 2>> wanted(pairs.begin(), pairs.end());
  if (wanted.empty()) {
    for (int a = 0; a < na; ++a) wanted.push_back({a, -1});
  }
  bool any = false;
  for (const auto& pair : wanted) {
    std::vector<double> series = regular_path_m(paths, grid, static_cast<std::size_t>(pair[0]));
    if (pair[1] >= 0) {
      const std::vector<double> other =
          regular_path_m(paths, grid, static_cast<std::size_t>(pair[1]));
      for (std::size_t i = 0; i < series.size(); ++i) series[i] = other[i] - series[i];
    }
    StructureFunctionEstimate e = temporal_structure_function(series, grid.step_s, lag_s);
    for (double v : e.value_m2) any = any || std::isfinite(v);
    result.series.push_back(pair);
    result.estimates.push_back(std::move(e));
  }
  if (any) {
    result.status = DiagnosticStatus::kOk;
  } else {
    result.message = "no pair of finite samples at any lag";
  }
  return result;
}

void WindOptions::validate() const {
  require_in_range("highpass_window_s", highpass_window_s, 0.0, 1e6, "s");
  require_in_range("min_speed_m_s", min_speed_m_s, 1e-3, 1e3, "m/s");
  require_in_range("max_lag_s", max_lag_s, 1e-3, 1e6, "s");
  require_in_range("min_correlation", min_correlation, -1.0, 1.0);
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " is negative");
  if (max_pairs < 2)
    throw InvalidInput("max_pairs = " + std::to_string(max_pairs) + " must be at least 2");
  if (coarse_search_points < 16) {
    throw InvalidInput("coarse_search_points = " + std::to_string(coarse_search_points) +
                       " must be at least 16");
  }
  if (!(min_baseline_m >= 0.0) || !(max_baseline_m > min_baseline_m)) {
    throw InvalidInput(describe_value("min_baseline_m", min_baseline_m) + " and " +
                       describe_value("max_baseline_m", max_baseline_m) +
                       " must satisfy 0 <= min < max");
  }
}

std::string WindEstimate::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": " << speed_m_s << " +/- " << speed_sigma_m_s << " m/s towards "
      << direction_to_deg << " +/- " << direction_sigma_deg << " deg, " << pairs_used << " of "
      << pairs.size() << " pairs";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

WindEstimate estimate_wind(const Night& night,
                           const AntennaPaths& paths,
                           const WindOptions& options) {
  options.validate();
  check_shape(paths, night.antenna_count());
  WindEstimate wind;
  const std::size_t na = paths.antennas;
  if (na < 2) {
    wind.message = "fewer than two antennas: no pairs";
    return wind;
  }
  if (paths.time_s.size() < 3) {
    wind.message = "fewer than three path samples";
    return wind;
  }
  const RegularGrid grid = regular_grid(paths.time_s);
  const auto half =
      static_cast<std::size_t>(std::llround(0.5 * options.highpass_window_s / grid.step_s));
  std::vector<MaskedSeries> series(na), coarse(na);
  std::vector<bool> usable(na, false);
  // Block means for the coarse lag search: long nights are searched on at most
  // coarse_search_points points, then refined at full resolution around the coarse peak.
  // Blocks of `factor` samples, rounded up: a series of 7200 samples (2 h at 1 s) is searched on
  // 3600 block means, not at full resolution over every lag.
  const std::size_t factor =
      (grid.length + options.coarse_search_points - 1) / options.coarse_search_points;
  for (std::size_t a = 0; a < na; ++a) {
    std::vector<double> x = regular_path_m(paths, grid, a);
    if (half > 0) x = highpass(x, half);
    usable[a] = std::count_if(x.begin(), x.end(), [](double v) { return std::isfinite(v); }) >= 3;
    coarse[a] = masked(factor > 1 ? block_means(x, factor) : x);
    series[a] = masked(x);
  }

  for (const auto& [a, b] : detail::antenna_pairs(night, options.max_pairs)) {
    PairLag p;
    p.antenna_a = static_cast<int>(a);
    p.antenna_b = static_cast<int>(b);
    p.baseline_east_m = night.array.position_enu_m[b][0] - night.array.position_enu_m[a][0];
    p.baseline_north_m = night.array.position_enu_m[b][1] - night.array.position_enu_m[a][1];
    p.lag_s = std::nan("");
    p.peak_correlation = std::nan("");
    wind.pairs.push_back(p);
  }
  // Pairs are independent: spread over threads, each writes only its own entry.
  detail::parallel_blocks(
      wind.pairs.size(), detail::worker_count(options.threads, wind.pairs.size()),
      [&](std::size_t begin, std::size_t end, std::size_t) {
        for (std::size_t i = begin; i < end; ++i) {
          PairLag& p = wind.pairs[i];
          const auto a = static_cast<std::size_t>(p.antenna_a);
          const auto b = static_cast<std::size_t>(p.antenna_b);
          const double length = std::hypot(p.baseline_east_m, p.baseline_north_m);
          if (!usable[a] || !usable[b] || length < options.min_baseline_m ||
              length > options.max_baseline_m)
            continue;
          const double max_lag = std::min(options.max_lag_s, length / options.min_speed_m_s);
          // Lags beyond a quarter of the series leave too little overlap for a stable
          // correlation.
          const long k_max = std::max(
              2L, std::min(std::lround(max_lag / grid.step_s), static_cast<long>(grid.length / 4)));
          const PeakLag peak =
              find_peak_lag(series[a], series[b], coarse[a], coarse[b], factor, k_max);
          if (std::isfinite(peak.correlation)) {
            p.lag_s = peak.lag_samples * grid.step_s;
            p.peak_correlation = peak.correlation;
            // A peak at the edge of the search range is not a peak.
            p.used = peak.correlation >= options.min_correlation && !peak.at_edge;
          }
        }
      });

  // Weighted least squares lag = b . u, with one round of outlier rejection.
  const auto solve = [&](Eigen::Vector2d* u, Eigen::Matrix2d* normal, double* s2) {
    Eigen::Matrix2d n = Eigen::Matrix2d::Zero();
    Eigen::Vector2d r = Eigen::Vector2d::Zero();
    std::size_t count = 0;
    for (const PairLag& p : wind.pairs) {
      if (!p.used) continue;
      const Eigen::Vector2d b(p.baseline_east_m, p.baseline_north_m);
      const double w = p.peak_correlation * p.peak_correlation;
      n += w * b * b.transpose();
      r += w * b * p.lag_s;
      ++count;
    }
    if (count < 3 || std::abs(n.determinant()) < 1e-12 * n.squaredNorm()) return false;
    *u = n.ldlt().solve(r);
    *normal = n;
    double chi2 = 0.0;
    for (const PairLag& p : wind.pairs) {
      if (!p.used) continue;
      const double res = p.lag_s - (p.baseline_east_m * (*u)(0) + p.baseline_north_m * (*u)(1));
      chi2 += p.peak_correlation * p.peak_correlation * res * res;
    }
    *s2 = chi2 / static_cast<double>(count - 2);
    return true;
  };
  Eigen::Vector2d u;
  Eigen::Matrix2d normal;
  double s2 = 0.0;
  if (!solve(&u, &normal, &s2)) {
    wind.message = "fewer than three well-correlated, non-collinear antenna pairs";
    return wind;
  }
  std::vector<double> abs_res;
  for (const PairLag& p : wind.pairs) {
    if (p.used)
      abs_res.push_back(std::abs(p.lag_s - (p.baseline_east_m * u(0) + p.baseline_north_m * u(1))));
  }
  std::nth_element(abs_res.begin(),
                   abs_res.begin() + static_cast<std::ptrdiff_t>(abs_res.size() / 2),
                   abs_res.end());
  const double limit = 4.0 * std::max(1.4826 * abs_res[abs_res.size() / 2], 0.25 * grid.step_s);
  for (PairLag& p : wind.pairs) {
    if (p.used &&
        std::abs(p.lag_s - (p.baseline_east_m * u(0) + p.baseline_north_m * u(1))) > limit)
      p.used = false;
  }
  if (!solve(&u, &normal, &s2)) {
    wind.message = "fewer than three consistent antenna pairs after outlier rejection";
    return wind;
  }
  wind.pairs_used = static_cast<std::size_t>(
      std::count_if(wind.pairs.begin(), wind.pairs.end(), [](const PairLag& p) { return p.used; }));
  const double u_norm = u.norm();
  // A screen faster than this crosses the longest used baseline within one sample: its lags
  // are indistinguishable from zero, and a "speed" of thousands of m/s is only noise in them.
  double longest_used_m = 0.0;
  for (const PairLag& p : wind.pairs) {
    if (p.used)
      longest_used_m = std::max(longest_used_m, std::hypot(p.baseline_east_m, p.baseline_north_m));
  }
  const double measurable_speed_m_s = longest_used_m / grid.step_s;
  if (!(u_norm > 0.0) || !(1.0 / u_norm <= measurable_speed_m_s)) {
    std::ostringstream msg;
    msg << "lags show no measurable motion across the array (the fit gives "
        << (u_norm > 0.0 ? 1.0 / u_norm : std::numeric_limits<double>::infinity()) << " m/s; above "
        << measurable_speed_m_s << " m/s the longest used baseline, " << longest_used_m
        << " m, lags by less than one " << grid.step_s << " s sample)";
    wind.status = DiagnosticStatus::kNoConvergence;
    wind.message = msg.str();
    return wind;
  }
  const Eigen::Vector2d v = u / (u_norm * u_norm);
  wind.east_m_s = v(0);
  wind.north_m_s = v(1);
  wind.speed_m_s = 1.0 / u_norm;
  double direction = std::atan2(v(0), v(1)) * 180.0 / std::numbers::pi;
  if (direction < 0.0) direction += 360.0;
  wind.direction_to_deg = direction;
  // Uncertainty: cov(u) = s^2 N^-1, then along u (speed) and across it (direction).
  const Eigen::Matrix2d cov = normal.inverse() * s2;
  const Eigen::Vector2d along = u / u_norm;
  const Eigen::Vector2d across(-along(1), along(0));
  wind.speed_sigma_m_s = std::sqrt(std::max(0.0, along.dot(cov * along))) / (u_norm * u_norm);
  wind.direction_sigma_deg =
      std::sqrt(std::max(0.0, across.dot(cov * across))) / u_norm * 180.0 / std::numbers::pi;
  wind.status = DiagnosticStatus::kOk;
  return wind;
}

}  // namespace wvr
