// The vectorised P.676-13 Annex 1 line sum against a plain rendering of the same equations:
// one frequency at a time, every line parameter recomputed per frequency, partial derivatives
// by ceres::Jet automatic differentiation. The equations are transcribed here independently of
// the library's line-parameter code (absorption/p676_terms.hpp), from ITU-R P.676-13 Annex 1
// eqs. 3, 5-9 (equation numbers from memory), and use the library's line tables only.
#include <ceres/jet.h>
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "absorption/p676_lines.hpp"
#include "wvr/absorption.hpp"

namespace wvr {
namespace {

using Jet = ceres::Jet<double, 3>;

// Returns N''_ox + N''_D (dry) and N''_wv (water) at f, with partials in (p, e, T).
template <typename S>
void plain_annex1(
    double f, const S& p, const S& e, const S& t, double continuum_scale, S& dry, S& water) {
  using ceres::exp;
  using ceres::pow;
  using ceres::sqrt;
  using std::exp;
  using std::pow;
  using std::sqrt;
  const S theta = 300.0 / t;
  dry = S(0.0);
  for (const detail::P676Line& l : detail::kP676OxygenLines) {
    const S strength = l.c1 * 1e-7 * p * pow(theta, 3.0) * exp(l.c2 * (1.0 - theta));
    S width = l.c3 * 1e-4 * (p * pow(theta, 0.8 - l.c4) + 1.1 * e * theta);
    width = sqrt(width * width + 2.25e-6);
    const S mixing = (l.c5 + l.c6 * theta) * 1e-4 * (p + e) * pow(theta, 0.8);
    const double below = l.f0_ghz - f, above = l.f0_ghz + f;
    dry += strength * (f / l.f0_ghz) *
           ((width - mixing * below) / (below * below + width * width) +
            (width - mixing * above) / (above * above + width * width));
  }
  const S d = 5.6e-4 * (p + e) * pow(theta, 0.8);
  dry += f * p * theta * theta *
         (6.14e-5 / (d * (1.0 + (f / d) * (f / d))) +
          1.4e-12 * p * pow(theta, 1.5) / (1.0 + 1.9e-5 * std::pow(f, 1.5)));
  water = S(0.0);
  for (const detail::P676Line& l : detail::kP676WaterLines) {
    const double scale = l.f0_ghz == 1780.0 ? continuum_scale : 1.0;
    const S strength = scale * l.c1 * 1e-1 * e * pow(theta, 3.5) * exp(l.c2 * (1.0 - theta));
    S width = l.c3 * 1e-4 * (p * pow(theta, l.c4) + l.c5 * e * pow(theta, l.c6));
    width = 0.535 * width + sqrt(0.217 * width * width + 2.1316e-12 * l.f0_ghz * l.f0_ghz / theta);
    const double below = l.f0_ghz - f, above = l.f0_ghz + f;
    water += strength * (f / l.f0_ghz) *
             (width / (below * below + width * width) + width / (above * above + width * width));
  }
  const double to_np_per_m = 0.1820 * f / 4342.944819032518;
  dry *= to_np_per_m;
  water *= to_np_per_m;
}

std::vector<double> test_frequencies() {
  std::vector<double> f;
  for (double x = 1.0; x <= 1000.0; x *= 1.013) f.push_back(x);
  // Line centres and the demo radiometer's band, where the sum is most sensitive.
  for (double x : {22.23508, 50.474214, 60.306056, 118.750334, 183.310087, 556.935985, 1000.0})
    f.push_back(x);
  for (double x = 175.0; x < 192.0; x += 0.37) f.push_back(x);
  return f;
}

std::vector<GasState> test_states() {
  // Dry pressure, vapour pressure, temperature from a humid sea-level layer to the
  // stratosphere, including a nearly dry one.
  return {{1013.0, 25.0, 300.0}, {550.0, 2.0, 268.0}, {300.0, 0.05, 230.0},
          {50.0, 1e-4, 210.0},   {5.0, 1e-6, 260.0},  {700.0, 8.0, 283.0}};
}

TEST(P676LineSum, ValuesEqualPlainRenderingTo1e10) {
  const std::vector<double> f = test_frequencies();
  for (double continuum_scale : {1.0, 1.12}) {
    const auto model =
        continuum_scale == 1.0 ? make_p676_annex1_model() : make_p676_annex1_model(continuum_scale);
    for (const GasState& g : test_states()) {
      std::vector<double> dry(f.size()), water(f.size());
      model->absorption(f, g, dry, water);
      for (std::size_t i = 0; i < f.size(); ++i) {
        double ref_dry = 0.0, ref_water = 0.0;
        plain_annex1<double>(f[i], g.dry_pressure_hpa, g.vapour_pressure_hpa, g.temperature_k,
                             continuum_scale, ref_dry, ref_water);
        EXPECT_NEAR(dry[i], ref_dry, 1e-10 * std::abs(ref_dry)) << "f = " << f[i];
        EXPECT_NEAR(water[i], ref_water, 1e-10 * std::abs(ref_water)) << "f = " << f[i];
      }
    }
  }
}

TEST(P676LineSum, PartialsEqualAutomaticDifferentiationTo1e10) {
  const std::vector<double> f = test_frequencies();
  const auto model = make_p676_annex1_model();
  for (const GasState& g : test_states()) {
    std::vector<double> total(f.size());
    std::vector<AbsorptionPartials> partials(f.size());
    model->total_absorption_with_partials(f, g, total, partials);
    const Jet p(g.dry_pressure_hpa, 0), e(g.vapour_pressure_hpa, 1), t(g.temperature_k, 2);
    for (std::size_t i = 0; i < f.size(); ++i) {
      Jet dry, water;
      plain_annex1<Jet>(f[i], p, e, t, 1.0, dry, water);
      const Jet ref = dry + water;
      EXPECT_NEAR(total[i], ref.a, 1e-10 * std::abs(ref.a)) << "f = " << f[i];
      const double got[3] = {partials[i].d_dry_pressure_per_hpa,
                             partials[i].d_vapour_pressure_per_hpa,
                             partials[i].d_temperature_per_k};
      for (int k = 0; k < 3; ++k) {
        EXPECT_NEAR(got[k], ref.v[k], 1e-10 * std::abs(ref.v[k]))
            << "f = " << f[i] << ", partial " << k << ", state p = " << g.dry_pressure_hpa;
      }
    }
  }
}

}  // namespace
}  // namespace wvr
