// Per-antenna residual excess over the array's length trend (residual_trend.hpp).

#include "diagnosis/residual_trend.hpp"

#include <algorithm>
#include <cmath>

#include "core/statistics.hpp"

namespace wvr::detail {
namespace {

struct Trend {
  double log_c = std::nan(""), slope = 0.0;
  double expected(double length_m) const {
    return std::exp(log_c + slope * std::log(std::max(1.0, length_m)));
  }
};

Trend fit_trend(std::span<const BaselineResidual> baselines,
                std::size_t left_out,
                double outlier_ratio) {
  Trend trend;
  std::vector<bool> keep(baselines.size());
  for (std::size_t i = 0; i < baselines.size(); ++i) {
    const BaselineResidual& r = baselines[i];
    keep[i] = r.a != left_out && r.b != left_out && r.rms > 0.0 && std::isfinite(r.rms);
  }
  for (int pass = 0; pass < 2; ++pass) {
    double sx = 0, sy = 0, sxx = 0, sxy = 0, n = 0;
    for (std::size_t i = 0; i < baselines.size(); ++i) {
      if (!keep[i]) continue;
      const double x = std::log(std::max(1.0, baselines[i].length_m));
      const double y = std::log(baselines[i].rms);
      sx += x;
      sy += y;
      sxx += x * x;
      sxy += x * y;
      n += 1.0;
    }
    if (n < 1.0) return trend;
    const double var_x = sxx - sx * sx / n;
    trend.slope =
        n >= 3.0 && var_x > 1e-12 ? std::clamp((sxy - sx * sy / n) / var_x, 0.0, 1.0) : 0.0;
    trend.log_c = (sy - trend.slope * sx) / n;
    if (pass == 0) {
      for (std::size_t i = 0; i < baselines.size(); ++i) {
        if (keep[i] && baselines[i].rms > outlier_ratio * trend.expected(baselines[i].length_m))
          keep[i] = false;
      }
    }
  }
  return trend;
}

}  // namespace

std::vector<double> residual_excess(std::span<const BaselineResidual> baselines,
                                    std::size_t antennas,
                                    double outlier_ratio) {
  std::vector<double> out(antennas, std::nan(""));
  for (std::size_t a = 0; a < antennas; ++a) {
    std::vector<double> ratios;
    Trend trend;
    bool fitted = false;
    for (const BaselineResidual& r : baselines) {
      if (r.a != a && r.b != a) continue;
      if (!fitted) {
        trend = fit_trend(baselines, a, outlier_ratio);
        fitted = true;
      }
      if (std::isfinite(trend.log_c)) ratios.push_back(r.rms / trend.expected(r.length_m));
    }
    out[a] = finite_median(ratios);
  }
  return out;
}

}  // namespace wvr::detail
