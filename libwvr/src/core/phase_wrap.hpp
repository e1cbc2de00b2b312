#pragma once
// Phase wrapping for the loops over every calibrator row (64 antennas x 8 h with every
// baseline: 11.6 million rows, some loops once per row and lag). std::remainder(x, 2 pi) is
// exact but glibc's saves and restores the floating-point environment on every call (glibc
// 2.36, __ieee754_remainder), which made it the largest single cost of those loops.

#include <cmath>
#include <numbers>

namespace wvr::detail {

// x - 2 pi n with n the integer nearest x / (2 pi) (ties to even, as std::remainder): a
// value in [-pi, pi] that differs from std::remainder(x, 2 pi) only by the rounding of
// x / (2 pi), a few ulp of x. NaN and infinities give NaN.
inline double wrap_phase_rad(double x) {
  constexpr double kTwoPi = 2.0 * std::numbers::pi;
  constexpr double kInverseTwoPi = 1.0 / kTwoPi;
  return x - kTwoPi * std::rint(x * kInverseTwoPi);
}

}  // namespace wvr::detail
