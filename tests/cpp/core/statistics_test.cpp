// Order statistics (core/statistics.hpp) against a plain sort.
#include "core/statistics.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

namespace {

// The definition: sort the finite values, interpolate linearly between neighbours.
double sorted_quantile(std::vector<double> v, double q) {
  v.erase(std::remove_if(v.begin(), v.end(), [](double x) { return !std::isfinite(x); }), v.end());
  if (v.empty()) return std::nan("");
  std::sort(v.begin(), v.end());
  const double position = q * static_cast<double>(v.size() - 1);
  const auto i = static_cast<std::size_t>(position);
  const double f = position - static_cast<double>(i);
  return i + 1 < v.size() ? (1 - f) * v[i] + f * v[i + 1] : v[i];
}

TEST(FiniteQuantile, EqualsTheSortedDefinitionWithMissingValuesAndTies) {
  std::mt19937 random(7);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_int_distribution<int> kind(0, 9);
  for (std::size_t n : {1u, 2u, 3u, 10u, 101u, 1000u}) {
    std::vector<double> v(n);
    for (double& x : v) {
      const int k = kind(random);
      // Some NaN and infinities (left out), some ties (rounded values).
      x = k == 0   ? std::nan("")
          : k == 1 ? INFINITY
          : k < 5  ? std::round(normal(random))
                   : normal(random);
    }
    for (double q : {0.0, 0.1, 0.25, 0.5, 0.75, 0.9, 1.0}) {
      const double expected = sorted_quantile(v, q);
      const double got = wvr::detail::finite_quantile(v, q);
      if (std::isnan(expected)) {
        EXPECT_TRUE(std::isnan(got)) << "n " << n << " q " << q;
      } else {
        EXPECT_EQ(got, expected) << "n " << n << " q " << q;
      }
    }
  }
}

TEST(FiniteQuantile, NoFiniteValueGivesNan) {
  EXPECT_TRUE(std::isnan(wvr::detail::finite_median({})));
  EXPECT_TRUE(std::isnan(wvr::detail::finite_median({std::nan(""), INFINITY, -INFINITY})));
  EXPECT_EQ(wvr::detail::finite_median({3.0, std::nan(""), 1.0, 2.0}), 2.0);
  EXPECT_EQ(wvr::detail::finite_median({4.0, 1.0, 3.0, 2.0}), 2.5);
}

}  // namespace
