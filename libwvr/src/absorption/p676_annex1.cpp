// ITU-R P.676-13 (08/2022) Annex 1, line-by-line specific attenuation (eqs. 1-9; equation
// numbers from memory, formulas checked against the official validation table in tests).
//
// gamma = 0.1820 f (N''_ox + N''_wv) dB/km with f in GHz, p and e in hPa, theta = 300/T.
// Line parameters depend on the gas state only, so they are computed once per call (as
// ceres::Jet when partial derivatives are wanted) and the line sum then runs over all
// frequencies at once (absorption/p676_line_sum.hpp).
#include <ceres/jet.h>

#include <array>
#include <cmath>
#include <vector>

#include "absorption/p676_line_sum.hpp"
#include "absorption/p676_terms.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

using detail::LineTable;
using detail::LineTerm;
using detail::oxygen_terms;
using detail::power;
using detail::water_terms;

// Conversion of N'' (dB/km per 0.1820 f) to Np/m: gamma_db_per_km / 4342.94...
constexpr double kNpPerMPerDbPerKm = 1.0 / 4342.944819032518;

// eq. 8-9: dry-air continuum N''_D = f p theta^2 [6.14e-5 / (d (1 + (f/d)^2)) +
// 1.4e-12 p theta^1.5 / (1 + 1.9e-5 f^1.5)], d = 5.6e-4 (p + e) theta^0.8. The
// frequency-independent factors are computed once per gas state.
template <typename S>
struct DryContinuum {
  DryContinuum(const S& p, const S& e, const S& theta)
      : width(5.6e-4 * (p + e) * power(theta, 0.8)),
        p_theta2(p * theta * theta),
        nitrogen(1.4e-12 * p * power(theta, 1.5)) {}
  S at(double f) const {
    return f * p_theta2 *
           (6.14e-5 / (width * (1.0 + (f / width) * (f / width))) +
            nitrogen / (1.0 + 1.9e-5 * std::pow(f, 1.5)));
  }
  S width, p_theta2, nitrogen;
};

// Scratch arrays of one thread, reused between calls.
struct Scratch {
  std::vector<LineTerm<double>> ox, wv;
  std::vector<LineTerm<ceres::Jet<double, 3>>> ox_jet, wv_jet;
  LineTable ox_table, wv_table;
  std::vector<double> ox_sum, wv_sum;
  std::array<std::vector<double>, 3> gradient;
};

Scratch& scratch() {
  thread_local Scratch s;
  return s;
}

class P676Annex1Model final : public AbsorptionModel {
 public:
  explicit P676Annex1Model(double continuum_scale) : continuum_scale_(continuum_scale) {}

  std::string name() const override {
    if (continuum_scale_ == 1.0) return "ITU-R P.676-13 Annex 1";
    return "ITU-R P.676-13 Annex 1 (water continuum x" + std::to_string(continuum_scale_) + ")";
  }

  void absorption(std::span<const double> freq_ghz,
                  const GasState& state,
                  std::span<double> dry_np_per_m,
                  std::span<double> water_np_per_m) const override {
    const double p = state.dry_pressure_hpa;
    const double e = state.vapour_pressure_hpa;
    const double theta = 300.0 / state.temperature_k;
    const std::size_t nf = freq_ghz.size();
    Scratch& w = scratch();
    oxygen_terms(p, e, theta, w.ox);
    water_terms(p, e, theta, continuum_scale_, w.wv);
    w.ox_table.assign(w.ox);
    w.wv_table.assign(w.wv);
    w.ox_sum.assign(nf, 0.0);
    w.wv_sum.assign(nf, 0.0);
    detail::add_line_sum(freq_ghz, w.ox_table, w.ox_sum);
    detail::add_line_sum(freq_ghz, w.wv_table, w.wv_sum);
    const DryContinuum<double> continuum(p, e, theta);
    for (std::size_t i = 0; i < nf; ++i) {
      const double f = freq_ghz[i];
      const double n_ox = w.ox_sum[i] + continuum.at(f);
      dry_np_per_m[i] = 0.1820 * f * n_ox * kNpPerMPerDbPerKm;
      water_np_per_m[i] = 0.1820 * f * w.wv_sum[i] * kNpPerMPerDbPerKm;
    }
  }

  void total_absorption_with_partials(std::span<const double> freq_ghz,
                                      const GasState& state,
                                      std::span<double> total_np_per_m,
                                      std::span<AbsorptionPartials> partials) const override {
    using Jet = ceres::Jet<double, 3>;
    const Jet p(state.dry_pressure_hpa, 0);
    const Jet e(state.vapour_pressure_hpa, 1);
    const Jet temperature(state.temperature_k, 2);
    const Jet theta = 300.0 / temperature;
    const std::size_t nf = freq_ghz.size();
    Scratch& w = scratch();
    oxygen_terms(p, e, theta, w.ox_jet);
    water_terms(p, e, theta, continuum_scale_, w.wv_jet);
    w.ox_table.assign(w.ox_jet);
    w.wv_table.assign(w.wv_jet);
    w.ox_sum.assign(nf, 0.0);
    w.wv_sum.assign(nf, 0.0);
    for (std::vector<double>& g : w.gradient) g.assign(nf, 0.0);
    const std::array<std::span<double>, 3> gradient = {w.gradient[0], w.gradient[1], w.gradient[2]};
    detail::add_line_sum_with_gradient(freq_ghz, w.ox_table, w.ox_sum, gradient);
    detail::add_line_sum_with_gradient(freq_ghz, w.wv_table, w.wv_sum, gradient);
    const DryContinuum<Jet> continuum(p, e, theta);
    for (std::size_t i = 0; i < nf; ++i) {
      const double f = freq_ghz[i];
      const Jet c = continuum.at(f);
      const double factor = 0.1820 * f * kNpPerMPerDbPerKm;
      total_np_per_m[i] = factor * (w.ox_sum[i] + c.a + w.wv_sum[i]);
      partials[i] = {factor * (w.gradient[0][i] + c.v[0]), factor * (w.gradient[1][i] + c.v[1]),
                     factor * (w.gradient[2][i] + c.v[2])};
    }
  }

 private:
  double continuum_scale_;
};

}  // namespace

std::shared_ptr<const AbsorptionModel> make_p676_annex1_model() {
  static const std::shared_ptr<const AbsorptionModel> model =
      std::make_shared<P676Annex1Model>(1.0);
  return model;
}

std::shared_ptr<const AbsorptionModel> make_p676_annex1_model(double water_continuum_scale) {
  require_in_range("water_continuum_scale", water_continuum_scale, 0.0, 10.0);
  return std::make_shared<P676Annex1Model>(water_continuum_scale);
}

}  // namespace wvr
