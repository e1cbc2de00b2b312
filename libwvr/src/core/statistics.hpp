#pragma once
// Small order statistics shared by retrieval summaries, correction metrics and diagnosis.

#include <algorithm>
#include <cmath>
#include <vector>

namespace wvr::detail {

// Linear-interpolated quantile q in [0, 1] of the finite values; NaN when there are none.
inline double finite_quantile(std::vector<double> v, double q) {
  v.erase(std::remove_if(v.begin(), v.end(), [](double x) { return !std::isfinite(x); }), v.end());
  if (v.empty()) return std::nan("");
  std::sort(v.begin(), v.end());
  const double position = q * static_cast<double>(v.size() - 1);
  const std::size_t i = static_cast<std::size_t>(position);
  const double f = position - static_cast<double>(i);
  return i + 1 < v.size() ? (1 - f) * v[i] + f * v[i + 1] : v[i];
}

inline double finite_median(std::vector<double> v) { return finite_quantile(std::move(v), 0.5); }

}  // namespace wvr::detail
