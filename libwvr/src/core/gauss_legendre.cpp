#include "core/gauss_legendre.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace wvr::detail {
namespace {

GaussLegendreRule make_rule(int n) {
  // Newton iteration on P_n from the usual cosine initial guesses.
  GaussLegendreRule rule;
  rule.node.resize(static_cast<std::size_t>(n));
  rule.weight.resize(static_cast<std::size_t>(n));
  for (int i = 0; i < n; ++i) {
    double x = std::cos(std::numbers::pi * (i + 0.75) / (n + 0.5));
    double derivative = 1.0;
    for (int iteration = 0; iteration < 100; ++iteration) {
      double p0 = 1.0;
      double p1 = x;
      for (int k = 2; k <= n; ++k) {
        const double p2 = ((2.0 * k - 1.0) * x * p1 - (k - 1.0) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      derivative = n * (x * p1 - p0) / (x * x - 1.0);
      const double step = p1 / derivative;
      x -= step;
      if (std::abs(step) < 1e-16) break;
    }
    rule.node[static_cast<std::size_t>(i)] = x;
    rule.weight[static_cast<std::size_t>(i)] = 2.0 / ((1.0 - x * x) * derivative * derivative);
  }
  return rule;
}

}  // namespace

const GaussLegendreRule& gauss_legendre(int points) {
  static const std::vector<GaussLegendreRule> rules = [] {
    std::vector<GaussLegendreRule> all;
    all.reserve(kMaxGaussLegendrePoints + 1);
    all.emplace_back();
    for (int n = 1; n <= kMaxGaussLegendrePoints; ++n) all.push_back(make_rule(n));
    return all;
  }();
  return rules[static_cast<std::size_t>(std::clamp(points, 1, kMaxGaussLegendrePoints))];
}

}  // namespace wvr::detail
