// Water-vapour absorption of the Rosenkranz (2017) model, with oxygen and the dry continuum
// of ITU-R P.676-13 Annex 1.
//
// Sources: P. W. Rosenkranz, Radio Science 33 (1998) 919-928 (form of the line sum and the
// continuum); P. W. Rosenkranz, Remote Sensing Code Library (2017), doi:10.21982/M81013 (the
// 2017 coefficients). The formulas are those restated in
// testdata/reference/rosenkranz-2017/README.md:
//   lines (Np/km)     = 3.1831e-5 N sum_i S_i (f/f_i)^2 sum_{df = f -+ (f_i + d_i), |df| <= 750}
//                       [g_i / (df^2 + g_i^2) - g_i / (750^2 + g_i^2)],
//   N = 3.335e16 rho, rho = 217 e / T (g/m^3), theta = 296 / T,
//   g_i = w_air p theta^x_air + w_self e theta^x_self (GHz), d_i = shift_ratio w_air p
//   theta^x_air, S_i = s296 theta^2.5 exp(b (1 - theta));
//   continuum (Np/km) = (5.96e-10 p theta_c^3 + 1.42e-8 e theta_c^7.5) e f^2, theta_c = 300/T,
// with p the dry and e the vapour pressure (hPa) and f in GHz.
//
// The water part is templated on the scalar and evaluated with ceres::Jet for its partial
// derivatives. The dry part is the P.676 model behind the public interface, whose partial
// derivatives come from central differences (relative step 1e-4: truncation ~1e-8 of the
// value, far below what the Jacobians are used for), so the P.676 code stays one rendering.
#include <ceres/jet.h>

#include <cmath>
#include <vector>

#include "absorption/rosenkranz2017_lines.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

using ceres::exp;
using ceres::pow;
using std::exp;
using std::pow;

constexpr double kCutoffGhz = 750.0;
constexpr double kNpPerMPerNpPerKm = 1e-3;

double value_of(double x) { return x; }
double value_of(const ceres::Jet<double, 3>& x) { return x.a; }

template <typename S>
struct Line {
  double f0_ghz;
  S strength;  // S_i (Hz cm^2)
  S width;     // g_i (GHz)
  S shift;     // d_i (GHz)
};

// Line parameters for one gas state (p, e in hPa, T in K).
template <typename S>
void line_terms(const S& p, const S& e, const S& temperature, std::vector<Line<S>>& out) {
  out.clear();
  const S theta = 296.0 / temperature;
  for (const detail::Rosenkranz2017Line& l : detail::kRosenkranz2017Lines) {
    const S air_width = l.w0_air_mhz_per_hpa * 1e-3 * p * pow(theta, l.x_air);
    const S width = air_width + l.w0_self_mhz_per_hpa * 1e-3 * e * pow(theta, l.x_self);
    const S strength = l.s296_hz_cm2 * pow(theta, 2.5) * exp(l.b * (1.0 - theta));
    out.push_back({l.f0_ghz, strength, width, l.shift_ratio * air_width});
  }
}

// Water-vapour absorption (Np/m) at f for the line parameters of one state.
template <typename S>
S water_np_per_m(double f,
                 const std::vector<Line<S>>& lines,
                 const S& number_density,
                 const S& continuum_per_f2) {
  S sum(0.0);
  for (const Line<S>& l : lines) {
    const S w2 = l.width * l.width;
    // Clough's local-line convention: each resonance minus its value at the cutoff.
    const S base = l.width / (kCutoffGhz * kCutoffGhz + w2);
    S shape(0.0);
    const S below = f - l.f0_ghz - l.shift;
    const S above = f + l.f0_ghz + l.shift;
    if (std::abs(value_of(below)) <= kCutoffGhz) shape += l.width / (below * below + w2) - base;
    if (std::abs(value_of(above)) <= kCutoffGhz) shape += l.width / (above * above + w2) - base;
    sum += l.strength * shape * ((f / l.f0_ghz) * (f / l.f0_ghz));
  }
  return (3.1831e-5 * number_density * sum + continuum_per_f2 * f * f) * kNpPerMPerNpPerKm;
}

template <typename S>
struct WaterState {
  S number_density;    // N (molecules, scaled as in the model)
  S continuum_per_f2;  // continuum (Np/km) / f^2
};

template <typename S>
WaterState<S> water_state(const S& p, const S& e, const S& temperature, double continuum_scale) {
  const S rho = 217.0 * e / temperature;  // g/m^3, the model's conversion
  const S theta_c = 300.0 / temperature;
  return {
      3.335e16 * rho,
      continuum_scale * (5.96e-10 * p * pow(theta_c, 3.0) + 1.42e-8 * e * pow(theta_c, 7.5)) * e};
}

class Rosenkranz2017Model final : public AbsorptionModel {
 public:
  explicit Rosenkranz2017Model(double continuum_scale)
      : continuum_scale_(continuum_scale), dry_model_(make_p676_annex1_model()) {}

  std::string name() const override {
    std::string n = "Rosenkranz (2017) water vapour";
    if (continuum_scale_ != 1.0) n += " (continuum x" + std::to_string(continuum_scale_) + ")";
    return n + ", ITU-R P.676-13 Annex 1 oxygen and dry continuum";
  }

  void absorption(std::span<const double> freq_ghz,
                  const GasState& state,
                  std::span<double> dry_np_per_m,
                  std::span<double> water_np_per_m) const override {
    // P.676 fills both; its water part is then replaced.
    dry_model_->absorption(freq_ghz, state, dry_np_per_m, water_np_per_m);
    thread_local std::vector<Line<double>> lines;
    line_terms(state.dry_pressure_hpa, state.vapour_pressure_hpa, state.temperature_k, lines);
    const WaterState<double> w = water_state(state.dry_pressure_hpa, state.vapour_pressure_hpa,
                                             state.temperature_k, continuum_scale_);
    for (std::size_t i = 0; i < freq_ghz.size(); ++i) {
      water_np_per_m[i] = water_np_per_m_at(freq_ghz[i], lines, w);
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
    thread_local std::vector<Line<Jet>> lines;
    line_terms(p, e, temperature, lines);
    const WaterState<Jet> w = water_state(p, e, temperature, continuum_scale_);
    dry_with_partials(freq_ghz, state, total_np_per_m, partials);
    for (std::size_t i = 0; i < freq_ghz.size(); ++i) {
      const Jet water = water_np_per_m_at(freq_ghz[i], lines, w);
      total_np_per_m[i] += water.a;
      partials[i].d_dry_pressure_per_hpa += water.v[0];
      partials[i].d_vapour_pressure_per_hpa += water.v[1];
      partials[i].d_temperature_per_k += water.v[2];
    }
  }

 private:
  template <typename S>
  static S water_np_per_m_at(double f, const std::vector<Line<S>>& lines, const WaterState<S>& w) {
    if (value_of(w.number_density) <= 0.0) return S(0.0);
    return water_np_per_m(f, lines, w.number_density, w.continuum_per_f2);
  }

  // P.676 dry coefficient and its central-difference partial derivatives.
  void dry_with_partials(std::span<const double> freq_ghz,
                         const GasState& state,
                         std::span<double> dry_np_per_m,
                         std::span<AbsorptionPartials> partials) const {
    const std::size_t nf = freq_ghz.size();
    thread_local std::vector<double> plus, minus, scratch;
    plus.resize(nf);
    minus.resize(nf);
    scratch.resize(nf);
    dry_model_->absorption(freq_ghz, state, dry_np_per_m, scratch);
    const double steps[3] = {1e-4 * state.dry_pressure_hpa + 1e-9,
                             1e-4 * state.vapour_pressure_hpa + 1e-6, 1e-4 * state.temperature_k};
    for (int k = 0; k < 3; ++k) {
      GasState up = state, down = state;
      double* up_field = k == 0   ? &up.dry_pressure_hpa
                         : k == 1 ? &up.vapour_pressure_hpa
                                  : &up.temperature_k;
      double* down_field = k == 0   ? &down.dry_pressure_hpa
                           : k == 1 ? &down.vapour_pressure_hpa
                                    : &down.temperature_k;
      *up_field += steps[k];
      *down_field -= steps[k];
      dry_model_->absorption(freq_ghz, up, plus, scratch);
      dry_model_->absorption(freq_ghz, down, minus, scratch);
      for (std::size_t i = 0; i < nf; ++i) {
        const double d = (plus[i] - minus[i]) / (2.0 * steps[k]);
        if (k == 0) partials[i].d_dry_pressure_per_hpa = d;
        if (k == 1) partials[i].d_vapour_pressure_per_hpa = d;
        if (k == 2) partials[i].d_temperature_per_k = d;
      }
    }
  }

  double continuum_scale_;
  std::shared_ptr<const AbsorptionModel> dry_model_;
};

}  // namespace

std::shared_ptr<const AbsorptionModel> make_rosenkranz2017_model(double water_continuum_scale) {
  require_in_range("water_continuum_scale", water_continuum_scale, 0.0, 10.0);
  return std::make_shared<Rosenkranz2017Model>(water_continuum_scale);
}

}  // namespace wvr
