// ITU-R P.676-13 (08/2022) Annex 1, line-by-line specific attenuation (eqs. 1-9; equation
// numbers from memory, formulas checked against the official validation table in tests).
//
// gamma = 0.1820 f (N''_ox + N''_wv) dB/km with f in GHz, p and e in hPa, theta = 300/T.
// The code is templated on the scalar so that one rendering of the equations serves
// both plain values and ceres::Jet partial derivatives.
#include <ceres/jet.h>

#include <cmath>
#include <vector>

#include "absorption/p676_terms.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

using ceres::pow;
using detail::LineTerm;
using detail::oxygen_terms;
using detail::water_terms;
using std::pow;

// Conversion of N'' (dB/km per 0.1820 f) to Np/m: gamma_db_per_km / 4342.94...
constexpr double kNpPerMPerDbPerKm = 1.0 / 4342.944819032518;

// eq. 5: line shape factor F_i (GHz^-1) times strength, summed over lines.
template <typename S>
S line_sum(double f, const std::vector<LineTerm<S>>& terms) {
  S sum(0.0);
  for (const LineTerm<S>& t : terms) {
    const double below = t.f0_ghz - f;
    const double above = t.f0_ghz + f;
    const S w2 = t.width * t.width;
    const S shape = (f / t.f0_ghz) * ((t.width - t.mixing * below) / (below * below + w2) +
                                      (t.width - t.mixing * above) / (above * above + w2));
    sum += t.strength * shape;
  }
  return sum;
}

// eq. 8-9: dry-air continuum N''_D.
template <typename S>
S dry_continuum(double f, const S& p, const S& e, const S& theta) {
  const S d = 5.6e-4 * (p + e) * pow(theta, 0.8);
  return f * p * theta * theta *
         (6.14e-5 / (d * (1.0 + (f / d) * (f / d))) +
          1.4e-12 * p * pow(theta, 1.5) / (1.0 + 1.9e-5 * std::pow(f, 1.5)));
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
    thread_local std::vector<LineTerm<double>> ox;
    thread_local std::vector<LineTerm<double>> wv;
    oxygen_terms(p, e, theta, ox);
    water_terms(p, e, theta, continuum_scale_, wv);
    for (std::size_t i = 0; i < freq_ghz.size(); ++i) {
      const double f = freq_ghz[i];
      const double n_ox = line_sum(f, ox) + dry_continuum(f, p, e, theta);
      const double n_wv = line_sum(f, wv);
      dry_np_per_m[i] = 0.1820 * f * n_ox * kNpPerMPerDbPerKm;
      water_np_per_m[i] = 0.1820 * f * n_wv * kNpPerMPerDbPerKm;
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
    thread_local std::vector<LineTerm<Jet>> ox;
    thread_local std::vector<LineTerm<Jet>> wv;
    oxygen_terms(p, e, theta, ox);
    water_terms(p, e, theta, continuum_scale_, wv);
    for (std::size_t i = 0; i < freq_ghz.size(); ++i) {
      const double f = freq_ghz[i];
      const Jet n = line_sum(f, ox) + dry_continuum(f, p, e, theta) + line_sum(f, wv);
      const Jet gamma = 0.1820 * f * n * kNpPerMPerDbPerKm;
      total_np_per_m[i] = gamma.a;
      partials[i] = {gamma.v[0], gamma.v[1], gamma.v[2]};
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
