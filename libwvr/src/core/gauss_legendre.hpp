#pragma once
// Gauss-Legendre quadrature rules on [-1, 1], shared by passband averaging, the turbulence
// spectrum integrals and tests.

#include <vector>

namespace wvr::detail {

struct GaussLegendreRule {
  std::vector<double> node;
  std::vector<double> weight;
};

inline constexpr int kMaxGaussLegendrePoints = 64;

// The n-point rule (n clamped to [1, kMaxGaussLegendrePoints]); computed once by Newton
// iteration on the Legendre polynomial P_n, then cached.
const GaussLegendreRule& gauss_legendre(int points);

}  // namespace wvr::detail
