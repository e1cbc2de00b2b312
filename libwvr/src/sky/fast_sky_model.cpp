#include "wvr/fast_sky_model.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numbers>

#include "sky/fast_kernels.hpp"
#include "wvr/cloud_liquid.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/planck.hpp"
#include "wvr/refractivity.hpp"
#include "wvr/water_vapour.hpp"

namespace wvr {
namespace {

// Monomial coefficients of the Chebyshev interpolant of samples y_j taken at the nodes
// x_j = cos(pi (j + 1/2) / n), n = degree + 1.
std::vector<double> chebyshev_to_monomial(const std::vector<double>& samples) {
  const std::size_t n = samples.size();
  std::vector<double> cheb(n, 0.0);
  for (std::size_t k = 0; k < n; ++k) {
    double sum = 0.0;
    for (std::size_t j = 0; j < n; ++j) {
      sum += samples[j] * std::cos(std::numbers::pi * static_cast<double>(k) *
                                   (static_cast<double>(j) + 0.5) / static_cast<double>(n));
    }
    cheb[k] = 2.0 * sum / static_cast<double>(n);
  }
  cheb[0] *= 0.5;
  std::vector<double> monomial(n, 0.0), t_prev(n, 0.0), t_curr(n, 0.0), t_next(n, 0.0);
  t_prev[0] = 1.0;             // T_0
  if (n > 1) t_curr[1] = 1.0;  // T_1
  for (std::size_t m = 0; m < n; ++m) monomial[m] += cheb[0] * t_prev[m];
  for (std::size_t k = 1; k < n; ++k) {
    for (std::size_t m = 0; m < n; ++m) monomial[m] += cheb[k] * t_curr[m];
    // T_{k+1} = 2 x T_k - T_{k-1}
    for (std::size_t m = 0; m < n; ++m) {
      t_next[m] = (m > 0 ? 2.0 * t_curr[m - 1] : 0.0) - t_prev[m];
    }
    t_prev.swap(t_curr);
    t_curr.swap(t_next);
  }
  return monomial;
}

double chebyshev_node(int j, int n) { return std::cos(std::numbers::pi * (j + 0.5) / n); }

}  // namespace

void FastSkyModelOptions::validate() const {
  require_in_range("max_pwv_mm", max_pwv_mm, 0.1, 100.0, "mm");
  require_in_range("cloud_base_above_ground_m", cloud_base_above_ground_m, 0.0, 15000.0, "m");
  require_in_range("cloud_thickness_m", cloud_thickness_m, 10.0, 10000.0, "m");
  require_in_range("max_liquid_water_path_kg_m2", max_liquid_water_path_kg_m2, 0.0, 10.0, "kg/m^2");
  if (polynomial_degree < 2 || polynomial_degree > 24) {
    throw InvalidInput("polynomial_degree = " + std::to_string(polynomial_degree) +
                       " is outside [2, 24]");
  }
}

const char* to_string(FastModelStatus status) {
  switch (status) {
    case FastModelStatus::kOk:
      return "ok";
    case FastModelStatus::kPwvOutOfDomain:
      return "pwv outside the fast model's domain";
    case FastModelStatus::kElevationOutOfDomain:
      return "elevation outside the fast model's domain";
    case FastModelStatus::kLiquidOutOfDomain:
      return "liquid water path outside the fast model's domain";
    case FastModelStatus::kBufferSizeMismatch:
      return "output buffer size mismatch";
  }
  return "unknown";
}

FastSkyModel::FastSkyModel(const AtmosphereProfile& base_profile,
                           const RadiometerConfig& radiometer,
                           const SkyModel& exact,
                           const FastSkyModelOptions& options)
    : options_(options) {
  options_.validate();
  radiometer.validate();
  const double base_pwv = base_profile.pwv_mm();
  if (!(base_pwv > 0.0)) {
    throw InvalidInput(describe_value("base profile pwv_mm", base_pwv) +
                       ": the fast model needs a vapour profile shape");
  }
  const SkyOptions& sky = exact.options();
  min_elevation_deg_ = sky.min_elevation_deg;
  cosmic_background_k_ = sky.cosmic_background_k;
  plane_parallel_ = sky.geometry == RayGeometry::kPlaneParallel;

  const auto quadrature = channel_quadrature(radiometer);
  channel_count_ = quadrature.size();
  for (std::size_t c = 0; c < quadrature.size(); ++c) {
    for (const QuadratureNode& node : quadrature[c]) {
      freq_ghz_.push_back(node.freq_ghz);
      node_weight_.push_back(node.weight);
      channel_of_node_.push_back(c);
    }
  }
  const std::size_t nf = freq_ghz_.size();
  const auto& layers = base_profile.layers();
  layer_count_ = layers.size();
  const std::size_t nl = layer_count_;

  // Geometry of the base profile.
  auto refractive_index = [&](const AtmosphereLayer& l) {
    if (!sky.refraction || plane_parallel_) return 1.0;
    const GasState g = l.gas_state();
    return 1.0 +
           1e-6 * (hydrostatic_refractivity(g.dry_pressure_hpa, g.vapour_pressure_hpa,
                                            g.temperature_k, sky.refractivity) +
                   wet_refractivity(g.vapour_pressure_hpa, g.temperature_k, sky.refractivity));
  };
  for (const AtmosphereLayer& l : layers) {
    base_m_.push_back(l.base_m);
    top_m_.push_back(l.top_m);
    impact_scale_.push_back(1.0 / refractive_index(l));
    const GasState g = l.gas_state();
    wet_refractivity_per_pwv_.push_back(
        wet_refractivity(g.vapour_pressure_hpa, g.temperature_k, sky.refractivity) / base_pwv);
  }
  ground_invariant_scale_ =
      refractive_index(layers.front()) * (constants::earth_radius_m + layers.front().base_m);

  // Absorption tables: sample every layer at the Chebyshev nodes in PWV.
  const int degree = options_.polynomial_degree;
  const int nodes = degree + 1;
  const std::size_t np = static_cast<std::size_t>(nodes);
  std::vector<std::vector<double>> alpha_at_node(np, std::vector<double>(nl * nf));
  std::vector<std::vector<double>> dadt_at_node(np, std::vector<double>(nl * nf));
  std::vector<double> alpha(nf);
  std::vector<AbsorptionPartials> partials(nf);
  for (int j = 0; j < nodes; ++j) {
    const double pwv = 0.5 * (chebyshev_node(j, nodes) + 1.0) * options_.max_pwv_mm;
    const double scale = pwv / base_pwv;
    for (std::size_t i = 0; i < nl; ++i) {
      const AtmosphereLayer& l = layers[i];
      const double e = vapour_pressure_hpa(l.vapour_density_kg_m3 * scale, l.temperature_k);
      const GasState g{l.pressure_hpa - e, e, l.temperature_k};
      exact.absorption_model().total_absorption_with_partials(freq_ghz_, g, alpha, partials);
      for (std::size_t f = 0; f < nf; ++f) {
        const AbsorptionPartials& d = partials[f];
        double a = alpha[f];
        double dadt =
            d.d_temperature_per_k +
            (d.d_vapour_pressure_per_hpa - d.d_dry_pressure_per_hpa) * e / l.temperature_k;
        if (l.liquid_density_kg_m3 > 0.0) {
          double d_kappa = 0.0;
          a += l.liquid_density_kg_m3 *
               cloud_liquid_absorption_m2_per_kg(freq_ghz_[f], l.temperature_k, &d_kappa);
          dadt += l.liquid_density_kg_m3 * d_kappa;
        }
        alpha_at_node[static_cast<std::size_t>(j)][i * nf + f] = a;
        dadt_at_node[static_cast<std::size_t>(j)][i * nf + f] = dadt;
      }
    }
  }
  alpha_coeffs_.assign(nl * np * nf, 0.0);
  d_alpha_dx_coeffs_.assign(nl * np * nf, 0.0);
  d_alpha_dt_coeffs_.assign(nl * np * nf, 0.0);
  std::vector<double> samples(np);
  for (std::size_t i = 0; i < nl; ++i) {
    for (std::size_t f = 0; f < nf; ++f) {
      for (std::size_t j = 0; j < np; ++j) samples[j] = alpha_at_node[j][i * nf + f];
      const std::vector<double> a = chebyshev_to_monomial(samples);
      for (std::size_t j = 0; j < np; ++j) samples[j] = dadt_at_node[j][i * nf + f];
      const std::vector<double> t = chebyshev_to_monomial(samples);
      for (std::size_t m = 0; m < np; ++m) {
        alpha_coeffs_[(i * np + m) * nf + f] = a[m];
        d_alpha_dt_coeffs_[(i * np + m) * nf + f] = t[m];
        if (m + 1 < np) {
          d_alpha_dx_coeffs_[(i * np + m) * nf + f] = static_cast<double>(m + 1) * a[m + 1];
        }
      }
    }
  }
  source_k_.resize(nl * nf);
  d_source_dt_.resize(nl * nf);
  for (std::size_t i = 0; i < nl; ++i) {
    for (std::size_t f = 0; f < nf; ++f) {
      source_k_[i * nf + f] = rj_brightness_k(freq_ghz_[f], layers[i].temperature_k);
      d_source_dt_[i * nf + f] = rj_brightness_derivative(freq_ghz_[f], layers[i].temperature_k);
    }
  }
  for (double f : freq_ghz_) cosmic_k_.push_back(rj_brightness_k(f, cosmic_background_k_));
  // Cloud: liquid content LWP / thickness spread over the overlapping share of each layer.
  liquid_alpha_per_lwp_.assign(nl * nf, 0.0);
  const double cloud_base = layers.front().base_m + options_.cloud_base_above_ground_m;
  const double cloud_top = cloud_base + options_.cloud_thickness_m;
  for (std::size_t i = 0; i < nl; ++i) {
    const double overlap =
        std::min(layers[i].top_m, cloud_top) - std::max(layers[i].base_m, cloud_base);
    if (overlap <= 0.0) continue;
    const double content_per_lwp = overlap / layers[i].thickness_m() / options_.cloud_thickness_m;
    for (std::size_t f = 0; f < nf; ++f) {
      liquid_alpha_per_lwp_[i * nf + f] =
          content_per_lwp *
          cloud_liquid_absorption_m2_per_kg(freq_ghz_[f], layers[i].temperature_k);
    }
  }
}

FastSkyModel::Workspace FastSkyModel::make_workspace() const {
  Workspace ws;
  const std::size_t n = layer_count_ * freq_ghz_.size();
  ws.path_m.resize(layer_count_);
  ws.tau.resize(n);
  ws.transmission.resize(n);
  ws.d_tau_d_pwv.resize(n);
  ws.d_tau_d_t.resize(n);
  ws.from_above.resize(n);
  ws.rj.resize(freq_ghz_.size());
  ws.d_rj_d_pwv.resize(freq_ghz_.size());
  ws.d_rj_d_t.resize(freq_ghz_.size());
  ws.d_rj_d_lwp.resize(freq_ghz_.size());
  ws.d_tau_d_lwp.resize(n);
  ws.t_below.resize(freq_ghz_.size());
  return ws;
}

double FastSkyModel::path_in_layer(std::size_t i, double invariant, double inv_sin) const noexcept {
  if (plane_parallel_) return (top_m_[i] - base_m_[i]) * inv_sin;
  // Straight ray in layer i with impact parameter b = C / n_i:
  // sqrt(rb^2 - b^2) - sqrt(ra^2 - b^2), written without cancellation.
  const double b = invariant * impact_scale_[i];
  const double ra = constants::earth_radius_m + base_m_[i];
  const double rb = constants::earth_radius_m + top_m_[i];
  const double qa = std::sqrt(std::max(ra * ra - b * b, 0.0));
  const double qb = std::sqrt(std::max(rb * rb - b * b, 0.0));
  return (rb - ra) * (rb + ra) / (qa + qb);
}

double FastSkyModel::wet_path_per_pwv_m_per_mm(double elevation_deg) const noexcept {
  const double el = elevation_deg * std::numbers::pi / 180.0;
  const double invariant = ground_invariant_scale_ * std::cos(el);
  const double inv_sin = 1.0 / std::sin(el);
  double total = 0.0;
  for (std::size_t i = 0; i < layer_count_; ++i) {
    total += 1e-6 * wet_refractivity_per_pwv_[i] * path_in_layer(i, invariant, inv_sin);
  }
  return total;
}

FastModelStatus FastSkyModel::evaluate(const FastSkyState& state,
                                       Workspace& ws,
                                       std::span<double> brightness_k,
                                       const FastSkyJacobians& jacobians) const noexcept {
  const double pwv_mm = state.pwv_mm;
  const double lwp = state.liquid_water_path_kg_m2;
  if (!(pwv_mm >= 0.0 && pwv_mm <= options_.max_pwv_mm)) return FastModelStatus::kPwvOutOfDomain;
  if (!(state.elevation_deg >= min_elevation_deg_ && state.elevation_deg <= 90.0)) {
    return FastModelStatus::kElevationOutOfDomain;
  }
  if (!(lwp >= 0.0 && lwp <= options_.max_liquid_water_path_kg_m2)) {
    return FastModelStatus::kLiquidOutOfDomain;
  }
  const bool want_pwv = !jacobians.d_pwv_k_per_mm.empty();
  const bool want_t = !jacobians.d_temperature.empty();
  const bool want_lwp = !jacobians.d_liquid_k_per_kg_m2.empty();
  auto size_ok = [&](std::span<double> s, bool wanted) {
    return !wanted || s.size() == channel_count_;
  };
  if (brightness_k.size() != channel_count_ || !size_ok(jacobians.d_pwv_k_per_mm, want_pwv) ||
      !size_ok(jacobians.d_temperature, want_t) ||
      !size_ok(jacobians.d_liquid_k_per_kg_m2, want_lwp) ||
      ws.tau.size() != layer_count_ * freq_ghz_.size()) {
    return FastModelStatus::kBufferSizeMismatch;
  }
  const std::size_t nf = freq_ghz_.size();
  const std::size_t nl = layer_count_;
  const std::size_t np = static_cast<std::size_t>(options_.polynomial_degree) + 1;
  const double x = 2.0 * pwv_mm / options_.max_pwv_mm - 1.0;
  const double dx_dpwv = 2.0 / options_.max_pwv_mm;
  const double el = state.elevation_deg * std::numbers::pi / 180.0;
  const double invariant = ground_invariant_scale_ * std::cos(el);
  const double inv_sin = 1.0 / std::sin(el);
  for (std::size_t i = 0; i < nl; ++i) ws.path_m[i] = path_in_layer(i, invariant, inv_sin);

  detail::evaluate_layer_polynomials(
      alpha_coeffs_.data(), want_pwv ? d_alpha_dx_coeffs_.data() : nullptr,
      want_t ? d_alpha_dt_coeffs_.data() : nullptr, ws.path_m.data(), nl, np, nf, x, dx_dpwv,
      ws.tau.data(), ws.d_tau_d_pwv.data(), ws.d_tau_d_t.data());
  if (lwp > 0.0 || want_lwp) {
    detail::add_liquid_opacity(liquid_alpha_per_lwp_.data(), ws.path_m.data(), nl, nf, lwp,
                               ws.tau.data(), ws.d_tau_d_lwp.data());
  }
  detail::exp_negative(ws.tau.data(), nl * nf, ws.transmission.data());
  detail::transfer_down(ws.transmission.data(), source_k_.data(), cosmic_k_.data(), nl, nf,
                        ws.from_above.data(), ws.rj.data());
  if (want_pwv || want_t || want_lwp) {
    detail::transfer_jacobians(
        ws.transmission.data(), source_k_.data(), d_source_dt_.data(), ws.from_above.data(),
        ws.d_tau_d_pwv.data(), ws.d_tau_d_t.data(), want_lwp ? ws.d_tau_d_lwp.data() : nullptr, nl,
        nf, ws.t_below.data(), ws.d_rj_d_pwv.data(), ws.d_rj_d_t.data(), ws.d_rj_d_lwp.data());
  }
  // Passband averages.
  for (std::size_t c = 0; c < channel_count_; ++c) {
    brightness_k[c] = 0.0;
    if (want_pwv) jacobians.d_pwv_k_per_mm[c] = 0.0;
    if (want_t) jacobians.d_temperature[c] = 0.0;
    if (want_lwp) jacobians.d_liquid_k_per_kg_m2[c] = 0.0;
  }
  for (std::size_t f = 0; f < nf; ++f) {
    const std::size_t c = channel_of_node_[f];
    const double w = node_weight_[f];
    brightness_k[c] += w * ws.rj[f];
    if (want_pwv) jacobians.d_pwv_k_per_mm[c] += w * ws.d_rj_d_pwv[f];
    if (want_t) jacobians.d_temperature[c] += w * ws.d_rj_d_t[f];
    if (want_lwp) jacobians.d_liquid_k_per_kg_m2[c] += w * ws.d_rj_d_lwp[f];
  }
  return FastModelStatus::kOk;
}

}  // namespace wvr
