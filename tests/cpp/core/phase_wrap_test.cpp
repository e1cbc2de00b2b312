// The fast phase wrap against std::remainder (the C standard's IEEE remainder).
#include "core/phase_wrap.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <numbers>
#include <random>

namespace wvr {
namespace {

TEST(PhaseWrap, EqualsTheIeeeRemainderWithinAFewUlp) {
  constexpr double kTwoPi = 2.0 * std::numbers::pi;
  std::mt19937_64 random(7);
  std::uniform_real_distribution<double> phase_rad(-200.0, 200.0);
  for (int i = 0; i < 200000; ++i) {
    const double x = phase_rad(random);
    const double exact = std::remainder(x, kTwoPi);
    const double fast = detail::wrap_phase_rad(x);
    // Near +-pi the two may land on opposite ends: the same phase.
    const double difference = std::remainder(fast - exact, kTwoPi);
    ASSERT_LE(std::abs(difference),
              8.0 * std::numeric_limits<double>::epsilon() * (1.0 + std::abs(x)))
        << "x = " << x;
    ASSERT_LE(std::abs(fast), std::numbers::pi * (1.0 + 1e-15)) << "x = " << x;
  }
  // Whole turns and small values.
  EXPECT_EQ(detail::wrap_phase_rad(0.0), 0.0);
  EXPECT_EQ(detail::wrap_phase_rad(0.25), 0.25);
  EXPECT_NEAR(detail::wrap_phase_rad(3.0 * kTwoPi + 0.5), 0.5, 1e-14);
  EXPECT_NEAR(detail::wrap_phase_rad(-7.0 * kTwoPi - 0.5), -0.5, 1e-14);
  EXPECT_TRUE(std::isnan(detail::wrap_phase_rad(std::nan(""))));
  EXPECT_TRUE(std::isnan(detail::wrap_phase_rad(std::numeric_limits<double>::infinity())));
}

}  // namespace
}  // namespace wvr
