// Dispersive wet refractivity: low-frequency limit, consistency of the dispersive and
// absorptive line shapes, and its size near the submillimetre windows checked against a
// Kramers-Kronig transform of the independent ITU-R P.676-13 Annex 1 absorption code.
// No published value of the dispersive path was re-read for these tests: the size checks are
// numerical, not against a publication.
#include "wvr/dispersion.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <functional>
#include <limits>
#include <numbers>
#include <string>
#include <vector>

#include "absorption/dispersion_detail.hpp"
#include "core/gauss_legendre.hpp"
#include "test_util.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/refractivity.hpp"
#include "wvr/site_config.hpp"

namespace wvr {
namespace {

// The ITU-R P.676-13 Annex 1 validation atmosphere: dry pressure 1013.25 hPa, T = 288.15 K,
// rho = 7.5 g/m^3 (e = 9.973 hPa).
const GasState kHumid{1013.25, 9.973, 288.15};
// A dry high site: p = 550 hPa, T = 268 K, rho = 1 g/m^3 (e = rho T / 216.7).
const GasState kDrySite{550.0, 268.0 / 216.7, 268.0};

// Named water lines of P.676-13 Annex 1 Table 2.
const std::vector<double> kStrongLinesGhz = {183.310087, 325.152888, 380.197353, 448.001085,
                                             556.935985, 752.033113, 987.926764};

detail::WaterLineState water_line(const GasState& state, double f0_ghz) {
  for (const detail::WaterLineState& line : detail::p676_water_line_states(state)) {
    if (line.f0_ghz == f0_ghz) return line;
  }
  ADD_FAILURE() << "no water line at " << f0_ghz << " GHz";
  return {};
}

// 10-point Gauss-Legendre nodes and weights on [-1, 1]: Newton iteration on the Legendre
// polynomial P_10, weights 2 / ((1 - x^2) P_10'(x)^2).

// Once-subtracted Kramers-Kronig relation for a causal response with N''(-f) = -N''(f):
//   N'(f) - N'(0) = (2 f^2 / pi) PV int_0^inf N''(x) / (x (x^2 - f^2)) dx.
// With h(x) = N''(x) / x the principal value is int_0^inf [h(x) - h(f)] / (x^2 - f^2) dx,
// because PV int_0^inf dx / (x^2 - f^2) = 0. Composite Gauss-Legendre on 0.5 GHz panels up to
// 4 THz (f must be a panel edge), geometric panels above; beyond X = 200 THz h falls as x^-2
// and the tail is added in closed form. N'' is evaluated once, in one batch, at all nodes.
class KramersKronigTransform {
 public:
  using Batch = std::function<std::vector<double>(const std::vector<double>& freq_ghz)>;

  explicit KramersKronigTransform(Batch n_imag) : n_imag_(std::move(n_imag)) {
    std::vector<double> edges;
    for (double x = 0.0; x < 4000.0; x += 0.5) edges.push_back(x);
    for (double x = 4000.0; x < kTopGhz; x *= 1.02) edges.push_back(x);
    edges.push_back(kTopGhz);
    for (std::size_t k = 0; k + 1 < edges.size(); ++k) {
      const double mid = 0.5 * (edges[k] + edges[k + 1]);
      const double half = 0.5 * (edges[k + 1] - edges[k]);
      const detail::GaussLegendreRule& rule = detail::gauss_legendre(10);
      for (std::size_t i = 0; i < rule.node.size(); ++i) {
        x_.push_back(mid + half * rule.node[i]);
        w_.push_back(half * rule.weight[i]);
      }
    }
    x_.push_back(kTopGhz);
    h_ = n_imag_(x_);
    for (std::size_t i = 0; i < x_.size(); ++i) h_[i] /= x_[i];
    h_top_ = h_.back();
    x_.pop_back();
    h_.pop_back();
  }

  double dispersion(double f) const {
    const double h_f = n_imag_({f})[0] / f;
    double body = 0.0;
    for (std::size_t i = 0; i < x_.size(); ++i) {
      body += w_[i] * (h_[i] - h_f) / (x_[i] * x_[i] - f * f);
    }
    const double tail = -h_f * std::atanh(f / kTopGhz) / f + h_top_ / (3.0 * kTopGhz);
    return 2.0 * f * f / std::numbers::pi * (body + tail);
  }

 private:
  static constexpr double kTopGhz = 2e5;
  Batch n_imag_;
  std::vector<double> x_, w_, h_;
  double h_top_ = 0.0;
};

TEST(Dispersion, VanishesAtLowFrequency) {
  const GasState humid{990.0, 20.0, 300.0};
  const double n_w = wet_refractivity(humid.vapour_pressure_hpa, humid.temperature_k);
  const double n_1 = dispersive_wet_refractivity(1.0, humid);
  EXPECT_LT(std::abs(n_1), 1e-4 * n_w);
  // N'(f) - N'(0) of a line far above f grows as f^2: doubling f quadruples it.
  EXPECT_NEAR(dispersive_wet_refractivity(2.0, humid) / n_1, 4.0, 0.04);

  SiteParameters site = load_site_config(test::testdata("sites/demo-site.toml")).parameters;
  site.pwv_mm = 1.0;
  site.surface_relative_humidity_pct.reset();
  const AtmosphereProfile profile = make_parametric_profile(site);
  EXPECT_NEAR(wet_phase_per_path_factor(1.0, profile), 1.0, 1e-4);
}

TEST(Dispersion, ImaginaryPartIsTheP676WaterAbsorption) {
  // The dispersion re-evaluates P.676 strengths and widths; their absorptive sum must equal
  // the absorption model's water coefficient (gamma = 0.1820 f N'', P.676-13 eq. 1).
  const auto model = make_p676_annex1_model();
  for (const GasState& state : {kHumid, kDrySite}) {
    for (double f : {22.235, 90.0, 183.31, 345.0, 556.936, 650.0, 987.9}) {
      double n_imag = 0.0;
      for (const detail::WaterLineState& line : detail::p676_water_line_states(state)) {
        n_imag +=
            line.strength_khz *
            detail::complex_line_shape(f, line.f0_ghz, line.width_ghz, 0.0).absorptive_per_ghz;
      }
      const std::vector<double> freq = {f};
      std::vector<double> dry(1), water(1);
      model->absorption(freq, state, dry, water);
      EXPECT_NEAR(0.1820 * f * n_imag, db_per_km_from_np_per_m(water[0]),
                  1e-12 * db_per_km_from_np_per_m(water[0]))
          << "f = " << f;
    }
  }
}

TEST(Dispersion, LineShapeIsTheComplexVanVleckWeisskopfForm) {
  // F = (f / f0) [(1 - i delta) / (f0 - f - i w) - (1 + i delta) / (f0 + f + i w)] (Liebe 1989,
  // from memory) written with complex arithmetic, against the real formulas of the library.
  using C = std::complex<double>;
  const C i(0.0, 1.0);
  for (double delta : {0.0, 0.03, -0.02}) {
    for (double f : {10.0, 118.0, 180.0, 183.31, 190.0, 500.0}) {
      const double f0 = 183.31, w = 2.7;
      const C expected =
          (f / f0) * ((1.0 - i * delta) / (f0 - f - i * w) - (1.0 + i * delta) / (f0 + f + i * w));
      const detail::ComplexLineShape shape = detail::complex_line_shape(f, f0, w, delta);
      EXPECT_NEAR(shape.dispersive_per_ghz, expected.real(), 1e-13 / w) << f << " " << delta;
      EXPECT_NEAR(shape.absorptive_per_ghz, expected.imag(), 1e-13 / w) << f << " " << delta;
    }
  }
}

TEST(Dispersion, DispersionAndAbsorptionOfOneLineAreConsistent) {
  const detail::WaterLineState line = water_line(kDrySite, 183.310087);
  const double f0 = line.f0_ghz, w = line.width_ghz;
  const auto shape = [&](double f) { return detail::complex_line_shape(f, f0, w, 0.0); };
  // At the centre the resonant term of F' is zero; only the non-resonant term
  // -(f0 + f) / ((f0 + f)^2 + w^2) at f = f0 is left, tiny against F''(f0) ~ 1 / w.
  EXPECT_NEAR(shape(f0).dispersive_per_ghz, -2.0 * f0 / (4.0 * f0 * f0 + w * w), 1e-15);
  EXPECT_LT(std::abs(shape(f0).dispersive_per_ghz), w / f0 * shape(f0).absorptive_per_ghz);
  // Lorentz/VVW resonance: F' peaks at +/- half the absorption peak one half-width from the
  // centre, to O(w / f0).
  EXPECT_NEAR(shape(f0 - w).dispersive_per_ghz / shape(f0).absorptive_per_ghz, 0.5, 2.0 * w / f0);
  EXPECT_NEAR(shape(f0 + w).dispersive_per_ghz / shape(f0).absorptive_per_ghz, -0.5, 2.0 * w / f0);
  // F' is the Kramers-Kronig transform of F'' (numerical, independent of the closed form).
  const KramersKronigTransform kk([&](const std::vector<double>& x) {
    std::vector<double> n_imag;
    for (double xi : x) n_imag.push_back(line.strength_khz * shape(xi).absorptive_per_ghz);
    return n_imag;
  });
  for (double f : {50.0, 150.0, 182.0, 183.5, 185.0, 400.0, 650.0}) {
    EXPECT_NEAR(line.strength_khz * shape(f).dispersive_per_ghz, kk.dispersion(f),
                1e-9 * line.strength_khz / w)
        << "f = " << f;
  }
}

TEST(Dispersion, SizeNearSubmillimetreWindowsMatchesKramersKronigOfP676Absorption) {
  // No trusted published value: N_disp is checked against the Kramers-Kronig transform of the
  // water absorption of the P.676-13 Annex 1 model (p676_annex1.cpp, itself checked against
  // the ITU-R validation examples), integrated numerically, the 1780 GHz pseudo-line included.
  const auto model = make_p676_annex1_model();
  for (const GasState& state : {kHumid, kDrySite}) {
    const KramersKronigTransform kk([&](const std::vector<double>& x) {
      std::vector<double> dry(x.size()), water(x.size());
      model->absorption(x, state, dry, water);
      for (std::size_t i = 0; i < x.size(); ++i) {
        water[i] = db_per_km_from_np_per_m(water[i]) / (0.1820 * x[i]);  // N'', eq. 1
      }
      return water;
    });
    const double n_w = wet_refractivity(state.vapour_pressure_hpa, state.temperature_k);
    for (double f : {345.0, 650.0, 690.0, 850.0}) {
      EXPECT_NEAR(dispersive_wet_refractivity(f, state), kk.dispersion(f), 1e-9 * n_w)
          << "f = " << f;
    }
  }
}

TEST(Dispersion, ChangesSignAcrossStrongLines) {
  for (double f0 : kStrongLinesGhz) {
    const detail::WaterLineState line = water_line(kDrySite, f0);
    const double below = dispersive_wet_refractivity(f0 - line.width_ghz, kDrySite);
    const double centre = dispersive_wet_refractivity(f0, kDrySite);
    const double above = dispersive_wet_refractivity(f0 + line.width_ghz, kDrySite);
    EXPECT_GT(below, centre) << "f0 = " << f0;
    EXPECT_GT(centre, above) << "f0 = " << f0;
  }
  // The two strongest lines dominate their neighbourhood: N_disp > 0 just below, < 0 above.
  for (double f0 : {556.935985, 752.033113}) {
    const double w = water_line(kDrySite, f0).width_ghz;
    EXPECT_GT(dispersive_wet_refractivity(f0 - w, kDrySite), 0.0) << "f0 = " << f0;
    EXPECT_LT(dispersive_wet_refractivity(f0 + w, kDrySite), 0.0) << "f0 = " << f0;
  }
}

TEST(Dispersion, StaticLineSumStaysBelowTheRotationalRefractivity) {
  // Each line's static refractivity is 2 S / f0 (F' goes from 0 at f = 0 to -2 / f0 far above
  // the line), and the orientation term k3 e / T^2 of the radio refractivity is the sum of
  // these over all rotational lines (Van Vleck 1932, The Theory of Electric and Magnetic
  // Susceptibilities, from memory). The catalogue, pseudo-line included, covers only part of
  // that band, so its sum must stay below k3 e / T^2 (Thayer 1974 k3).
  for (double t : {200.0, 250.0, 288.15, 310.0}) {
    const GasState state{700.0, 5.0, t};
    double lines = 0.0, pseudo = 0.0;
    for (const detail::WaterLineState& line : detail::p676_water_line_states(state)) {
      (line.continuum_pseudo_line ? pseudo : lines) += 2.0 * line.strength_khz / line.f0_ghz;
    }
    const double orientation = RefractivityConstants::thayer_1974().k3_k2_per_hpa * 5.0 / (t * t);
    EXPECT_GT(pseudo, 0.0);
    EXPECT_LT(lines + pseudo, orientation) << "T = " << t;
  }
}

TEST(Dispersion, FactorWeightsLayersByThickness) {
  AtmosphereLayer low{5000.0, 5300.0, 550.0, 268.0, 2.0e-3, 0.0};
  AtmosphereLayer high{5300.0, 6500.0, 500.0, 262.0, 0.5e-3, 0.0};
  const AtmosphereProfile profile({low, high});
  for (double f : {230.0, 650.0}) {
    double disp = 0.0, wet = 0.0;
    for (const AtmosphereLayer& layer : {low, high}) {
      const GasState s = layer.gas_state();
      disp += dispersive_wet_refractivity(f, s) * layer.thickness_m();
      wet += wet_refractivity(s.vapour_pressure_hpa, s.temperature_k) * layer.thickness_m();
    }
    EXPECT_NEAR(wet_phase_per_path_factor(f, profile), 1.0 + disp / wet, 1e-12) << "f = " << f;
  }
}

TEST(Dispersion, FactorGrowsTowardsThe183GhzLine) {
  // Between the weak 22 GHz line and 183 GHz the lines above f dominate; each adds
  // 2 S f^2 / (f0 (f0^2 - f^2)) (narrow-line limit), positive and growing with f.
  SiteParameters site = load_site_config(test::testdata("sites/demo-site.toml")).parameters;
  site.pwv_mm = 1.0;
  site.surface_relative_humidity_pct.reset();
  const AtmosphereProfile profile = make_parametric_profile(site);
  double previous = 1.0;
  for (double f : {60.0, 90.0, 150.0, 175.0}) {
    const double factor = wet_phase_per_path_factor(f, profile);
    EXPECT_GT(factor, previous) << "f = " << f;
    previous = factor;
  }
}

TEST(Dispersion, PathPhase) {
  // One wavelength c / f of path is 2 pi of phase.
  const double lambda_m = constants::speed_of_light_m_per_s / 345e9;
  EXPECT_NEAR(wet_path_phase_rad(lambda_m, 345.0, 1.0), 2.0 * std::numbers::pi, 1e-12);
  EXPECT_NEAR(wet_path_phase_rad(-3.0 * lambda_m, 345.0, 1.05),
              -3.0 * 1.05 * 2.0 * std::numbers::pi, 1e-11);
}

void expect_invalid(const std::function<void()>& call, const std::string& field) {
  try {
    call();
    ADD_FAILURE() << "no InvalidInput for " << field;
  } catch (const InvalidInput& e) {
    EXPECT_NE(std::string(e.what()).find(field), std::string::npos) << e.what();
  }
}

TEST(Dispersion, RejectsBadInput) {
  const double nan = std::nan("");
  const double inf = std::numeric_limits<double>::infinity();
  for (double f : {0.5, 1000.5, nan, inf}) {
    expect_invalid([&] { dispersive_wet_refractivity(f, kDrySite); }, "freq_ghz");
    expect_invalid([&] { wet_path_phase_rad(1e-3, f, 1.0); }, "freq_ghz");
  }
  expect_invalid(
      [&] {
        dispersive_wet_refractivity(345.0, {550.0, -1.0, 268.0});
      },
      "state.vapour_pressure_hpa");
  expect_invalid(
      [&] {
        dispersive_wet_refractivity(345.0, {nan, 1.0, 268.0});
      },
      "state.dry_pressure_hpa");
  expect_invalid(
      [&] {
        dispersive_wet_refractivity(345.0, {550.0, 1.0, 20.0});
      },
      "state.temperature_k");
  for (double factor : {0.0, -1.0, nan, inf}) {
    expect_invalid([&] { wet_path_phase_rad(1e-3, 345.0, factor); }, "phase_per_path_factor");
  }
  expect_invalid([&] { wet_path_phase_rad(nan, 345.0, 1.0); }, "path_m");

  const AtmosphereProfile dry({AtmosphereLayer{5000.0, 6000.0, 550.0, 268.0, 0.0, 0.0}});
  expect_invalid([&] { wet_phase_per_path_factor(345.0, dry); }, "profile.pwv_mm");
  expect_invalid([&] { wet_phase_per_path_factor(345.0, AtmosphereProfile()); }, "profile");
  SiteParameters site = load_site_config(test::testdata("sites/demo-site.toml")).parameters;
  expect_invalid([&] { wet_phase_per_path_factor(1200.0, make_parametric_profile(site)); },
                 "freq_ghz");
}

}  // namespace
}  // namespace wvr
