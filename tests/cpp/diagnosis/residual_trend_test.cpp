// The per-antenna residual excess over the array's length trend used by the diagnosis.
#include "diagnosis/residual_trend.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace wvr::detail {
namespace {

// Every pair of antennas placed on a line at `x_m`, with residual rms = c length^slope times
// the antennas' factors.
std::vector<BaselineResidual> all_pairs(const std::vector<double>& x_m,
                                        double slope,
                                        const std::vector<double>& factor) {
  std::vector<BaselineResidual> out;
  for (std::size_t a = 0; a < x_m.size(); ++a) {
    for (std::size_t b = a + 1; b < x_m.size(); ++b) {
      const double length = std::abs(x_m[b] - x_m[a]);
      out.push_back({a, b, length, 0.01 * std::pow(length, slope) * factor[a] * factor[b]});
    }
  }
  return out;
}

TEST(ResidualTrend, LongBaselinesUnderDryTurbulenceAreNotFaulty) {
  // Residual growing as length^0.6 (dry air), one antenna far out: its baselines are the
  // longest and carry the largest residual, yet it follows the array's trend.
  std::vector<double> x;
  for (int i = 0; i < 12; ++i) x.push_back(20.0 * i);
  x.push_back(2000.0);
  const std::vector<double> ones(x.size(), 1.0);
  const std::vector<double> excess = residual_excess(all_pairs(x, 0.6, ones), x.size(), 3.0);
  for (std::size_t a = 0; a < x.size(); ++a) EXPECT_NEAR(excess[a], 1.0, 0.05) << a;
}

TEST(ResidualTrend, AFaultyAntennaStandsOutEvenWhenFarAway) {
  // 12 antennas within 220 m, one at 2 km with 5x the residual on its baselines: fitting the
  // trend without the antenna being judged keeps it from bending the trend towards itself.
  std::vector<double> x;
  for (int i = 0; i < 12; ++i) x.push_back(20.0 * i);
  x.push_back(2000.0);
  std::vector<double> factor(x.size(), 1.0);
  factor.back() = 5.0;
  const std::vector<double> flat = residual_excess(all_pairs(x, 0.0, factor), x.size(), 3.0);
  EXPECT_NEAR(flat.back(), 5.0, 0.01);
  const std::vector<double> growing = residual_excess(all_pairs(x, 0.5, factor), x.size(), 3.0);
  EXPECT_GT(growing.back(), 3.0);  // the fault_residual_ratio default
  for (std::size_t a = 0; a + 1 < x.size(); ++a) EXPECT_LT(growing[a], 1.5) << a;
  // A faulty antenna in the middle of the array too.
  factor.back() = 1.0;
  factor[5] = 4.0;
  const std::vector<double> middle = residual_excess(all_pairs(x, 0.5, factor), x.size(), 3.0);
  EXPECT_NEAR(middle[5], 4.0, 0.5);
}

TEST(ResidualTrend, NoBaselinesGiveNaN) {
  const std::vector<BaselineResidual> none;
  const std::vector<double> excess = residual_excess(none, 3, 3.0);
  ASSERT_EQ(excess.size(), 3u);
  for (double e : excess) EXPECT_TRUE(std::isnan(e));
  // A single baseline: nothing else to compare with.
  const std::vector<BaselineResidual> one = {{0, 1, 100.0, 0.1}};
  EXPECT_TRUE(std::isnan(residual_excess(one, 2, 3.0)[0]));
}

}  // namespace
}  // namespace wvr::detail
