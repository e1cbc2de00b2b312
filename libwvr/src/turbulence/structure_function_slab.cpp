// Equivalent slab thickness from a measured structure function (wvr/structure_function.hpp).
//
// The slab (von Karman) structure function has one shape in d / W for each L0 / W:
//   D(d) = A g(d / W; L0 / W),  g(x; l) = D_slab(x; W = 1, L0 = l) / D_slab(1; W = 1, L0 = l),
// so A = D(W). g is tabulated once per process (ln g on a uniform ln x grid from the
// LayerSpectrum quadrature, one row per tabulated L0 / W plus one without an outer scale) and
// continued by power laws outside the table. For each trial W and row the best ln A is the
// mean log residual, so the fit is a profile in ln W (minimised over the rows allowed): a fine
// grid, then a parabola through the best grid point.

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <sstream>

#include "turbulence/log_points.hpp"
#include "wvr/error.hpp"
#include "wvr/phase_screen.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {
namespace {

class SlabShapeTable {
 public:
  // ln x from 1e-4 to 1e5: the thick regime is approached as (d / W)^(1/3), so at x = 1e-4
  // the local slope is within 0.02 of 5/3; at 1e5 (no outer scale) within 0.01 of 2/3.
  static constexpr double kLogLo = -4.0 * 2.302585092994046;
  static constexpr double kLogHi = 5.0 * 2.302585092994046;
  static constexpr int kPerDecade = 16;
  static constexpr int kPoints = 9 * kPerDecade + 1;
  static constexpr double kStep = (kLogHi - kLogLo) / (kPoints - 1);
  // Outer scales L0 / W = 10^0.5 .. 10^4 at 6 per decade, then one row without an outer scale
  // (L0 = 1e12 W, beyond every x of the table).
  static constexpr int kOuterRows = 22;
  static constexpr int kRows = kOuterRows + 1;

  SlabShapeTable() {
    for (int r = 0; r < kRows; ++r) {
      const double outer_over_w = r < kOuterRows ? std::pow(10.0, 0.5 + r / 6.0) : 1e12;
      TurbulentLayer unit;
      unit.thickness_m = 1.0;
      unit.outer_scale_m = outer_over_w;
      unit.reference_baseline_m = 1.0;
      unit.path_rms_at_reference_m = 1.0;  // D(W) = 1, so A is D at d = W
      const LayerSpectrum spectrum(unit);
      Row& row = rows_[static_cast<std::size_t>(r)];
      row.outer_over_w = r < kOuterRows ? outer_over_w : std::numeric_limits<double>::infinity();
      for (int i = 0; i < kPoints; ++i) {
        row.log_g[static_cast<std::size_t>(i)] =
            std::log(spectrum.structure_function_m2(std::exp(kLogLo + kStep * i)));
      }
      row.end_slope = (row.log_g[kPoints - 1] - row.log_g[kPoints - 2]) / kStep;
    }
  }

  static constexpr int no_outer_scale_row() { return kRows - 1; }
  double outer_over_w(int row) const { return rows_[static_cast<std::size_t>(row)].outer_over_w; }

  // ln g at ln x: cubic (Catmull-Rom) inside the table, power laws outside (5/3 below, the
  // row's end slope above: 2/3 without an outer scale, ~0 when saturated).
  double log_g(int row_index, double log_x) const {
    const Row& row = rows_[static_cast<std::size_t>(row_index)];
    if (log_x <= kLogLo) return row.log_g.front() + (5.0 / 3.0) * (log_x - kLogLo);
    if (log_x >= kLogHi) return row.log_g.back() + row.end_slope * (log_x - kLogHi);
    const double u = (log_x - kLogLo) / kStep;
    const int i = std::min(static_cast<int>(u), kPoints - 2);
    const double t = u - i;
    const auto at = [&row](int k) {
      return row.log_g[static_cast<std::size_t>(std::clamp(k, 0, kPoints - 1))];
    };
    const double p0 = at(i - 1), p1 = at(i), p2 = at(i + 1), p3 = at(i + 2);
    return p1 + 0.5 * t *
                    (p2 - p0 +
                     t * (2.0 * p0 - 5.0 * p1 + 4.0 * p2 - p3 + t * (3.0 * (p1 - p2) + p3 - p0)));
  }

 private:
  struct Row {
    double outer_over_w = 0.0;
    double end_slope = 0.0;
    std::array<double, kPoints> log_g{};
  };
  std::array<Row, kRows> rows_{};
};

const SlabShapeTable& shape_table() {
  static const SlabShapeTable table;
  return table;
}

struct Profile {
  double sse = 0.0, log_a = 0.0;
};

// Best ln A (the mean log residual) and the SSE for one shape row and thickness.
Profile profile_at(int row,
                   double log_w,
                   const std::vector<double>& log_d,
                   const std::vector<double>& log_v) {
  const SlabShapeTable& g = shape_table();
  const double n = static_cast<double>(log_d.size());
  Profile p;
  double sum = 0.0, sum_sq = 0.0;
  for (std::size_t i = 0; i < log_d.size(); ++i) {
    const double r = log_v[i] - g.log_g(row, log_d[i] - log_w);
    sum += r;
    sum_sq += r * r;
  }
  p.log_a = sum / n;
  p.sse = std::max(0.0, sum_sq - sum * sum / n);
  return p;
}

// Straight line through (ln d, ln D) of the points selected: the power-law slope of one regime.
RegimeSlope regime_slope(const std::vector<double>& log_d,
                         const std::vector<double>& log_v,
                         double log_lo,
                         double log_hi) {
  RegimeSlope r;
  std::vector<double> x, y;
  for (std::size_t i = 0; i < log_d.size(); ++i) {
    if (log_d[i] >= log_lo && log_d[i] <= log_hi) {
      x.push_back(log_d[i]);
      y.push_back(log_v[i]);
    }
  }
  r.points = x.size();
  const double span =
      x.empty() ? 0.0
                : *std::max_element(x.begin(), x.end()) - *std::min_element(x.begin(), x.end());
  if (x.size() < 3 || span < std::log(1.5)) {
    r.message = std::to_string(x.size()) + " points in this regime (needs >= 3 over >= 1.5x)";
    return r;
  }
  const double n = static_cast<double>(x.size());
  double mx = 0.0, my = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    mx += x[i] / n;
    my += y[i] / n;
  }
  double sxx = 0.0, sxy = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    sxx += (x[i] - mx) * (x[i] - mx);
    sxy += (x[i] - mx) * (y[i] - my);
  }
  r.slope = sxy / sxx;
  double sse = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double e = y[i] - my - r.slope * (x[i] - mx);
    sse += e * e;
  }
  r.slope_sigma = std::sqrt(sse / (n - 2.0) / sxx);
  r.measured = true;
  return r;
}

}  // namespace

const char* to_string(ThicknessConstraint constraint) {
  switch (constraint) {
    case ThicknessConstraint::kMeasured:
      return "measured";
    case ThicknessConstraint::kAtLeast:
      return "at least";
    case ThicknessConstraint::kAtMost:
      return "at most";
  }
  return "unknown";
}

double SlabThicknessFit::evaluate_m2(double separation_m) const {
  if (!(separation_m > 0.0) || !(thickness_m > 0.0) || !(path_m2_at_thickness > 0.0) ||
      shape_row < 0)
    return std::nan("");
  return path_m2_at_thickness *
         std::exp(shape_table().log_g(shape_row, std::log(separation_m / thickness_m)));
}

std::string SlabThicknessFit::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": slab thickness " << to_string(constraint) << " " << thickness_m
      << " m (1-sigma " << thickness_low_m << " .. " << thickness_high_m << " m), outer scale "
      << outer_scale_m << " m, D(W) " << path_m2_at_thickness << " m^2, " << points_used
      << " points, rms ln residual " << rms_log_residual;
  if (!message.empty()) out << " [" << message << "]";
  for (const auto& [name, r] : {std::pair{"thick", &thick}, std::pair{"thin", &thin}}) {
    out << "; " << name << " slope ";
    if (r->measured) {
      out << r->slope << " +/- " << r->slope_sigma << " (" << r->points << " points)";
    } else {
      out << "not measured: " << r->message;
    }
  }
  return out.str();
}

SlabThicknessFit fit_slab_thickness(std::span<const double> separation_m,
                                    std::span<const double> structure_m2) {
  const detail::LogPoints points = detail::log_points(separation_m, structure_m2);
  const std::vector<double>& log_d = points.log_d;
  const std::vector<double>& log_v = points.log_v;
  SlabThicknessFit fit;
  const std::size_t n = log_d.size();
  fit.points_used = n;
  const double log_min = n ? *std::min_element(log_d.begin(), log_d.end()) : 0.0;
  const double log_max = n ? *std::max_element(log_d.begin(), log_d.end()) : 0.0;
  // Two parameters (ln A, ln W) and a residual variance need at least three points over a
  // factor of two in separation.
  if (n < 3 || log_max - log_min < std::log(2.0)) {
    fit.status = DiagnosticStatus::kNoData;
    fit.message = std::to_string(n) + " positive, finite points over a separation ratio of " +
                  std::to_string(n ? std::exp(log_max - log_min) : 0.0) +
                  " (needs >= 3 points over >= 2x)";
    return fit;
  }
  // W searched from 1/100 of the shortest to 100 times the longest separation: beyond, the
  // data sit wholly on one asymptote and say nothing more about W.
  const double lo = log_min - std::log(100.0), hi = log_max + std::log(100.0);
  constexpr int kGrid = 400;
  const double step = (hi - lo) / kGrid;
  const SlabShapeTable& table = shape_table();
  // Profile SSE over W, minimised over the outer-scale rows allowed.
  struct ProfileCurve {
    std::vector<double> sse;
    std::vector<int> row;
    int best = 0;
  };
  const auto profile_curve = [&](int first_row, int last_row) {
    ProfileCurve c;
    c.sse.assign(kGrid + 1, std::numeric_limits<double>::infinity());
    c.row.assign(kGrid + 1, last_row);
    for (int g = 0; g <= kGrid; ++g) {
      const auto gi = static_cast<std::size_t>(g);
      for (int r = first_row; r <= last_row; ++r) {
        const double v = profile_at(r, lo + step * g, log_d, log_v).sse;
        if (v < c.sse[gi]) {
          c.sse[gi] = v;
          c.row[gi] = r;
        }
      }
      if (c.sse[gi] < c.sse[static_cast<std::size_t>(c.best)]) c.best = g;
    }
    return c;
  };
  const int unbounded = SlabShapeTable::no_outer_scale_row();
  ProfileCurve curve = profile_curve(unbounded, unbounded);
  // An outer scale (one more parameter) only when it lowers the Bayesian information
  // criterion n ln(SSE / n) + k ln n (Schwarz 1978): saturation must be in the points.
  if (n >= 5) {
    ProfileCurve with_outer = profile_curve(0, unbounded);
    const double dn = static_cast<double>(n);
    const auto bic = [dn](double sse, double k) {
      return dn * std::log(std::max(sse, 1e-30) / dn) + k * std::log(dn);
    };
    if (bic(with_outer.sse[static_cast<std::size_t>(with_outer.best)], 3.0) <
        bic(curve.sse[static_cast<std::size_t>(curve.best)], 2.0)) {
      curve = std::move(with_outer);
    }
  }
  const std::vector<double>& sse = curve.sse;
  const int best = curve.best;
  const int row = curve.row[static_cast<std::size_t>(best)];
  double log_w = lo + step * best;
  if (best > 0 && best < kGrid) {
    // Vertex of the parabola through the best grid point and its neighbours.
    const double s0 = sse[static_cast<std::size_t>(best - 1)],
                 s1 = sse[static_cast<std::size_t>(best)],
                 s2 = sse[static_cast<std::size_t>(best + 1)];
    const double curvature = s0 - 2.0 * s1 + s2;
    if (curvature > 0.0) log_w += 0.5 * step * (s0 - s2) / curvature;
  }
  const Profile p = profile_at(row, log_w, log_d, log_v);
  fit.shape_row = row;
  fit.thickness_m = std::exp(log_w);
  fit.path_m2_at_thickness = std::exp(p.log_a);
  fit.rms_log_residual = std::sqrt(p.sse / static_cast<double>(n));
  // 1-sigma interval: where the profile SSE rises by the residual variance per degree of
  // freedom (Delta chi^2 = 1 with the per-point error estimated from the fit itself).
  const double s2 = std::max(p.sse / static_cast<double>(n - 2), 1e-12);
  const double limit = p.sse + s2;
  int g_lo = best, g_hi = best;
  while (g_lo > 0 && sse[static_cast<std::size_t>(g_lo)] <= limit) --g_lo;
  while (g_hi < kGrid && sse[static_cast<std::size_t>(g_hi)] <= limit) ++g_hi;
  const bool open_low = sse[static_cast<std::size_t>(g_lo)] <= limit;
  const bool open_high = sse[static_cast<std::size_t>(g_hi)] <= limit;
  // Interval ends: the crossing of the limit by the continuous profile (the best outer-scale
  // row held), bisected between the best value and the first grid point outside.
  const auto crossing = [&](int outside) {
    double inside_x = log_w, outside_x = lo + step * outside;
    for (int i = 0; i < 40; ++i) {
      const double mid = 0.5 * (inside_x + outside_x);
      (profile_at(row, mid, log_d, log_v).sse <= limit ? inside_x : outside_x) = mid;
    }
    return 0.5 * (inside_x + outside_x);
  };
  const double log_low = open_low ? lo : crossing(g_lo);
  const double log_high = open_high ? hi : crossing(g_hi);
  fit.thickness_low_m = std::exp(std::min(log_low, log_w));
  fit.thickness_high_m = std::exp(std::max(log_high, log_w));
  fit.status = DiagnosticStatus::kOk;
  const auto limit_at = [&](ThicknessConstraint constraint, double thickness_m,
                            const std::string& why) {
    fit.constraint = constraint;
    fit.thickness_m = thickness_m;
    // The interval becomes the one-sided range the limit allows (up to the search limits).
    if (constraint == ThicknessConstraint::kAtLeast) {
      fit.thickness_low_m = thickness_m;
      fit.thickness_high_m = std::exp(hi);
    } else {
      fit.thickness_low_m = std::exp(lo);
      fit.thickness_high_m = thickness_m;
    }
    fit.path_m2_at_thickness =
        std::exp(profile_at(row, std::log(fit.thickness_m), log_d, log_v).log_a);
    fit.message = why;
  };
  if (open_low && open_high) {
    fit.status = DiagnosticStatus::kTooFewPoints;
    fit.message = "the points do not constrain the thickness";
  } else if (open_high) {
    // Every baseline looks thick: only a lower limit (the interval's lower end).
    limit_at(ThicknessConstraint::kAtLeast, fit.thickness_low_m,
             "every separation is in the thick (5/3) regime");
  } else if (open_low) {
    limit_at(ThicknessConstraint::kAtMost, fit.thickness_high_m,
             "every separation is in the thin (2/3) regime");
  } else if (log_w > log_max) {
    // A best W beyond the points is read off the slow approach of the slope to 5/3: a slope
    // error of 0.02 moves it by ~2x (theory curves with a tilt), so only a limit is claimed.
    limit_at(ThicknessConstraint::kAtLeast, std::exp(log_max),
             "the transition lies beyond the longest separation");
  } else if (log_w < log_min) {
    limit_at(ThicknessConstraint::kAtMost, std::exp(log_min),
             "the transition lies below the shortest separation");
  }
  // Regime slopes: points at least kRegimeFactor inside each regime, or all of them when the
  // thickness is only a limit on that side.
  constexpr double kRegimeFactor = 5.0;
  const double log_w_fit = std::log(fit.thickness_m);
  const double inf = std::numeric_limits<double>::infinity();
  const bool all_thick = fit.constraint == ThicknessConstraint::kAtLeast;
  const bool all_thin = fit.constraint == ThicknessConstraint::kAtMost;
  fit.thick =
      regime_slope(log_d, log_v, -inf, all_thick ? inf : log_w_fit - std::log(kRegimeFactor));
  fit.outer_scale_m = table.outer_over_w(row) * fit.thickness_m;
  // The thin regime ends where the outer scale starts to bend D over.
  const double thin_end =
      std::isfinite(fit.outer_scale_m) ? std::log(fit.outer_scale_m / 20.0) : inf;
  fit.thin =
      regime_slope(log_d, log_v, all_thin ? -inf : log_w_fit + std::log(kRegimeFactor), thin_end);
  return fit;
}

}  // namespace wvr
