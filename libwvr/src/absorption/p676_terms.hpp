#pragma once
// Line strengths, widths and mixing of ITU-R P.676-13 (08/2022) Annex 1 for one gas state,
// shared by the absorption model and the dispersive refractivity (one rendering of eqs.
// 3, 6 and 7). Templated on the scalar so ceres::Jet partial derivatives flow through.
#include <ceres/jet.h>

#include <cmath>
#include <vector>

#include "absorption/p676_lines.hpp"

namespace wvr::detail {

using ceres::exp;
using ceres::sqrt;
using std::exp;
using std::sqrt;

template <typename S>
struct LineTerm {
  double f0_ghz;
  S strength;  // S_i
  S width;     // Delta f (GHz)
  S mixing;    // delta (dimensionless)
};

// x^y for a constant exponent. For a Jet this costs one pow instead of ceres' two (value and
// y x^(y-1)): d(x^y) = y x^y / x dx.
inline double power(double x, double y) { return std::pow(x, y); }
template <typename T, int N>
ceres::Jet<T, N> power(const ceres::Jet<T, N>& x, double y) {
  const T value = std::pow(x.a, y);
  return ceres::Jet<T, N>(value, (y * value / x.a) * x.v);
}

template <typename S>
void oxygen_terms(const S& p, const S& e, const S& theta, std::vector<LineTerm<S>>& out) {
  out.clear();
  // Factors shared by every line, computed once per gas state.
  const S theta_cubed_p = 1e-7 * p * power(theta, 3.0);
  const S one_minus_theta = 1.0 - theta;
  const S vapour_width = 1.1 * e * theta;
  const S mixing_pressure = 1e-4 * (p + e) * power(theta, 0.8);
  for (const P676Line& line : kP676OxygenLines) {
    // eq. 3: S = a1 1e-7 p theta^3 exp[a2 (1 - theta)]
    S strength = line.c1 * theta_cubed_p * exp(line.c2 * one_minus_theta);
    // eq. 6a/6b: width with Zeeman floor
    S width = line.c3 * 1e-4 * (p * power(theta, 0.8 - line.c4) + vapour_width);
    width = sqrt(width * width + 2.25e-6);
    // eq. 7: line mixing
    S mixing = (line.c5 + line.c6 * theta) * mixing_pressure;
    out.push_back({line.f0_ghz, strength, width, mixing});
  }
}

// The last entry of Table 2 is the 1780 GHz pseudo-line carrying the water-vapour continuum.
constexpr double kContinuumPseudoLineGhz = 1780.0;

template <typename S>
void water_terms(
    const S& p, const S& e, const S& theta, double continuum_scale, std::vector<LineTerm<S>>& out) {
  out.clear();
  const S strength_factor = 1e-1 * e * power(theta, 3.5);
  const S one_minus_theta = 1.0 - theta;
  const S inverse_theta = 1.0 / theta;
  for (const P676Line& line : kP676WaterLines) {
    const double scale = line.f0_ghz == kContinuumPseudoLineGhz ? continuum_scale : 1.0;
    // eq. 3: S = b1 1e-1 e theta^3.5 exp[b2 (1 - theta)]
    S strength = scale * line.c1 * strength_factor * exp(line.c2 * one_minus_theta);
    // eq. 6a/6b: width with Doppler term
    S width = line.c3 * 1e-4 * (p * power(theta, line.c4) + line.c5 * e * power(theta, line.c6));
    width = 0.535 * width +
            sqrt(0.217 * width * width + 2.1316e-12 * line.f0_ghz * line.f0_ghz * inverse_theta);
    out.push_back({line.f0_ghz, strength, width, S(0.0)});
  }
}

}  // namespace wvr::detail
