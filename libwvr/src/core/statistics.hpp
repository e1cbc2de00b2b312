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
  const double position = q * static_cast<double>(v.size() - 1);
  const std::size_t i = static_cast<std::size_t>(position);
  const double f = position - static_cast<double>(i);
  // The i-th and (i+1)-th smallest values by selection, not a full sort: linear, not n log n.
  const auto ith = v.begin() + static_cast<std::ptrdiff_t>(i);
  std::nth_element(v.begin(), ith, v.end());
  if (i + 1 == v.size()) return *ith;
  return (1 - f) * *ith + f * *std::min_element(ith + 1, v.end());
}

inline double finite_median(std::vector<double> v) { return finite_quantile(std::move(v), 0.5); }

}  // namespace wvr::detail
