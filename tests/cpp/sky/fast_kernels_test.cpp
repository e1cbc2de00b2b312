// The vectorised kernels of the fast model against plain reference code.
#include "sky/fast_kernels.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

namespace wvr::detail {
namespace {

TEST(FastKernels, ExpNegativeMatchesStdExp) {
  std::vector<double> tau;
  for (double t = 0.0; t < 745.0; t = t * 1.07 + 1e-9) tau.push_back(t);
  std::mt19937_64 rng(3);
  std::uniform_real_distribution<double> draw(0.0, 40.0);
  for (int i = 0; i < 10000; ++i) tau.push_back(draw(rng));
  std::vector<double> out(tau.size());
  exp_negative(tau.data(), tau.size(), out.data());
  for (std::size_t k = 0; k < tau.size(); ++k) {
    if (tau[k] <= 700.0) {
      const double expected = std::exp(-tau[k]);
      EXPECT_NEAR(out[k], expected, 2e-15 * expected) << "tau = " << tau[k];
    } else {
      EXPECT_LE(out[k], std::exp(-700.0)) << "tau = " << tau[k];
    }
  }
}

TEST(FastKernels, HornerMatchesDirectPolynomial) {
  const std::size_t nl = 3, np = 5, nf = 11;  // nf not a multiple of any vector width
  std::vector<double> a(nl * np * nf), da(a.size()), dt(a.size()), path = {10.0, 20.0, 30.0};
  std::mt19937_64 rng(5);
  std::normal_distribution<double> draw;
  for (std::size_t k = 0; k < a.size(); ++k) {
    a[k] = draw(rng);
    da[k] = draw(rng);
    dt[k] = draw(rng);
  }
  std::vector<double> tau(nl * nf), dtp(tau.size()), dtt(tau.size());
  const double x = 0.37, dxdp = 0.2;
  evaluate_layer_polynomials(a.data(), da.data(), dt.data(), path.data(), nl, np, nf, x, dxdp,
                             tau.data(), dtp.data(), dtt.data());
  for (std::size_t i = 0; i < nl; ++i) {
    for (std::size_t f = 0; f < nf; ++f) {
      double pa = 0, pda = 0, pdt = 0;
      for (std::size_t m = 0; m < np; ++m) {
        const double xm = std::pow(x, static_cast<double>(m));
        pa += a[(i * np + m) * nf + f] * xm;
        if (m + 1 < np) pda += da[(i * np + m) * nf + f] * xm;
        pdt += dt[(i * np + m) * nf + f] * xm;
      }
      EXPECT_NEAR(tau[i * nf + f], pa * path[i], 1e-12 * std::abs(pa * path[i]) + 1e-12);
      EXPECT_NEAR(dtp[i * nf + f], pda * path[i] * dxdp, 1e-12 * std::abs(pda * path[i]) + 1e-12);
      EXPECT_NEAR(dtt[i * nf + f], pdt * path[i], 1e-12 * std::abs(pdt * path[i]) + 1e-12);
    }
  }
}

TEST(FastKernels, TransferPassesMatchLayerByLayerRecursion) {
  const std::size_t nl = 7, nf = 5;
  std::vector<double> t(nl * nf), s(t.size()), dsdt(t.size()), dtp(t.size()), dtt(t.size());
  std::mt19937_64 rng(9);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  for (std::size_t k = 0; k < t.size(); ++k) {
    t[k] = unit(rng);
    s[k] = 200.0 + 80.0 * unit(rng);
    dsdt[k] = 1.0;
    dtp[k] = unit(rng);
    dtt[k] = unit(rng) * 1e-3;
  }
  std::vector<double> cosmic(nf, 1.0), above(t.size()), radiance(nf), below(nf), dp(nf), dT(nf),
      dl(nf);
  transfer_down(t.data(), s.data(), cosmic.data(), nl, nf, above.data(), radiance.data());
  transfer_jacobians(t.data(), s.data(), dsdt.data(), above.data(), dtp.data(), dtt.data(),
                     dtp.data(), nl, nf, below.data(), dp.data(), dT.data(), dl.data());
  for (std::size_t f = 0; f < nf; ++f) {
    // Brightness: sum of each layer's emission times the transmission below it.
    double j = 0.0, trans = 1.0;
    for (std::size_t i = 0; i < nl; ++i) {
      j += s[i * nf + f] * (1.0 - t[i * nf + f]) * trans;
      trans *= t[i * nf + f];
    }
    j += cosmic[f] * trans;
    EXPECT_NEAR(radiance[f], j, 1e-10 * j);
    // d/dpwv by a finite difference on tau: t -> t exp(-h dtp).
    const double h = 1e-6;
    double jp = 0.0;
    trans = 1.0;
    for (std::size_t i = 0; i < nl; ++i) {
      const double ti = t[i * nf + f] * std::exp(-h * dtp[i * nf + f]);
      jp += s[i * nf + f] * (1.0 - ti) * trans;
      trans *= ti;
    }
    jp += cosmic[f] * trans;
    EXPECT_NEAR(dp[f], (jp - j) / h, 1e-4 * std::abs(dp[f]) + 1e-6);
    EXPECT_DOUBLE_EQ(dl[f], dp[f]);  // same d tau given for both
  }
}

}  // namespace
}  // namespace wvr::detail
