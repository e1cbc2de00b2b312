// The scaling solve's closed-form Jacobians against Ceres' own numeric differentiation
// (ceres::NumericDiffCostFunction, central differences, Ceres 2.1) of the same residual.
#include <gtest/gtest.h>

#include <array>
#include <random>
#include <vector>

#include "correction/ceres_phase_residuals.hpp"

namespace wvr::detail {
namespace {

// The residual alone, for numeric differentiation.
struct PlainPhaseResidual {
  Row row;
  bool operator()(const double* s,
                  const double* ra,
                  const double* rb,
                  const double* oa,
                  const double* ob,
                  double* residual) const {
    const double* p[] = {s, ra, rb, oa, ob};
    return PhaseResidual(row).Evaluate(p, residual, nullptr);
  }
};

struct PlainAntennaPhaseResidual {
  AntennaRow row;
  bool operator()(
      const double* s, const double* r, const double* o, const double* c, double* residual) const {
    const double* p[] = {s, r, o, c};
    return AntennaPhaseResidual(row).Evaluate(p, residual, nullptr);
  }
};

// Residuals and every Jacobian block of `analytic` and `numeric` at `values` agree.
template <std::size_t Blocks>
void expect_same_jacobians(const ceres::CostFunction& analytic,
                           const ceres::CostFunction& numeric,
                           const std::array<double, Blocks>& values) {
  std::array<const double*, Blocks> parameters;
  for (std::size_t i = 0; i < Blocks; ++i) parameters[i] = &values[i];
  std::array<std::array<double, 2>, Blocks> ja, jn;
  std::array<double*, Blocks> pa, pn;
  for (std::size_t i = 0; i < Blocks; ++i) {
    pa[i] = ja[i].data();
    pn[i] = jn[i].data();
  }
  double ra[2], rn[2];
  ASSERT_TRUE(analytic.Evaluate(parameters.data(), ra, pa.data()));
  ASSERT_TRUE(numeric.Evaluate(parameters.data(), rn, pn.data()));
  EXPECT_DOUBLE_EQ(ra[0], rn[0]);
  EXPECT_DOUBLE_EQ(ra[1], rn[1]);
  for (std::size_t i = 0; i < Blocks; ++i)
    for (std::size_t k = 0; k < 2; ++k)
      EXPECT_NEAR(ja[i][k], jn[i][k], 1e-7 * (1.0 + std::abs(jn[i][k])))
          << "parameter block " << i << ", residual " << k;
}

TEST(PhaseResiduals, BaselineJacobiansEqualNumericDifferentiation) {
  std::mt19937 random(3);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  for (int trial = 0; trial < 50; ++trial) {
    Row row{};
    row.phase_rad = 3.0 * u(random);
    row.k_rad_per_mm = 4.8 + u(random);
    row.path_a_mm = 2.0 * u(random);
    row.path_b_mm = 2.0 * u(random);
    const PhaseResidual analytic(row);
    const ceres::NumericDiffCostFunction<PlainPhaseResidual, ceres::CENTRAL, 2, 1, 1, 1, 1, 1>
        numeric(new PlainPhaseResidual{row});
    expect_same_jacobians<5>(analytic, numeric,
                             {1.0 + 0.3 * u(random), 1.0 + 0.1 * u(random), 1.0 + 0.1 * u(random),
                              u(random), u(random)});
  }
}

TEST(PhaseResiduals, AntennaJacobiansEqualNumericDifferentiation) {
  std::mt19937 random(4);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  for (int trial = 0; trial < 50; ++trial) {
    AntennaRow row{};
    row.phase_rad = 3.0 * u(random);
    row.k_rad_per_mm = 4.8 + u(random);
    row.path_mm = 2.0 * u(random);
    const AntennaPhaseResidual analytic(row);
    const ceres::NumericDiffCostFunction<PlainAntennaPhaseResidual, ceres::CENTRAL, 2, 1, 1, 1, 1>
        numeric(new PlainAntennaPhaseResidual{row});
    expect_same_jacobians<4>(analytic, numeric,
                             {1.0 + 0.3 * u(random), 1.0 + 0.1 * u(random), u(random), u(random)});
  }
}

// Blocks Ceres holds constant get no Jacobian pointer: the others are still written.
TEST(PhaseResiduals, ConstantBlocksAreSkipped) {
  Row row{};
  row.phase_rad = 0.4;
  row.k_rad_per_mm = 5.0;
  row.path_a_mm = 0.3;
  row.path_b_mm = -0.2;
  const std::array<double, 5> values = {1.0, 1.0, 1.0, 0.1, -0.2};
  const double* parameters[] = {&values[0], &values[1], &values[2], &values[3], &values[4]};
  double scale_jacobian[2] = {0.0, 0.0}, offset_jacobian[2] = {0.0, 0.0};
  double* jacobians[] = {scale_jacobian, nullptr, nullptr, nullptr, offset_jacobian};
  double residual[2];
  ASSERT_TRUE(PhaseResidual(row).Evaluate(parameters, residual, jacobians));
  // d model / d offset_b = 1: the block is (sin model, -cos model).
  const double model = 5.0 * (-0.2 - 0.3) + (-0.2) - 0.1;
  EXPECT_DOUBLE_EQ(offset_jacobian[0], std::sin(model));
  EXPECT_DOUBLE_EQ(offset_jacobian[1], -std::cos(model));
  EXPECT_DOUBLE_EQ(scale_jacobian[0], std::sin(model) * 5.0 * (-0.2 - 0.3));
}

}  // namespace
}  // namespace wvr::detail
