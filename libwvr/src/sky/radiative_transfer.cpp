#include "sky/radiative_transfer.hpp"

#include <cmath>
#include <numbers>

#include "wvr/cloud_liquid.hpp"
#include "wvr/constants.hpp"
#include "wvr/planck.hpp"
#include "wvr/refractivity.hpp"

namespace wvr::detail {

std::vector<double> layer_path_lengths_m(const AtmosphereProfile& profile,
                                         double elevation_deg,
                                         const SkyOptions& options) {
  const auto& layers = profile.layers();
  std::vector<double> ds(layers.size());
  const double el = elevation_deg * std::numbers::pi / 180.0;
  if (options.geometry == RayGeometry::kPlaneParallel) {
    for (std::size_t i = 0; i < layers.size(); ++i) ds[i] = layers[i].thickness_m() / std::sin(el);
    return ds;
  }
  auto refractive_index = [&](const AtmosphereLayer& l) {
    if (!options.refraction) return 1.0;
    const GasState g = l.gas_state();
    return 1.0 +
           1e-6 * (hydrostatic_refractivity(g.dry_pressure_hpa, g.vapour_pressure_hpa,
                                            g.temperature_k, options.refractivity) +
                   wet_refractivity(g.vapour_pressure_hpa, g.temperature_k, options.refractivity));
  };
  // Bouguer's invariant for a spherically stratified medium: n r cos(e) = const. In layer i
  // (constant n_i) the ray is straight with impact parameter b_i = C / n_i.
  const double r0 = constants::earth_radius_m + layers.front().base_m;
  const double invariant = refractive_index(layers.front()) * r0 * std::cos(el);
  for (std::size_t i = 0; i < layers.size(); ++i) {
    const double b = invariant / refractive_index(layers[i]);
    const double ra = constants::earth_radius_m + layers[i].base_m;
    const double rb = constants::earth_radius_m + layers[i].top_m;
    // sqrt(rb^2 - b^2) - sqrt(ra^2 - b^2), written without cancellation.
    const double qa = std::sqrt(std::max(ra * ra - b * b, 0.0));
    const double qb = std::sqrt(std::max(rb * rb - b * b, 0.0));
    ds[i] = (rb - ra) * (rb + ra) / (qa + qb);
  }
  return ds;
}

LayerOpticsTable exact_layer_optics(const AtmosphereProfile& profile,
                                    std::span<const double> freq_ghz,
                                    std::span<const double> layer_path_m,
                                    const AbsorptionModel& absorption) {
  const auto& layers = profile.layers();
  LayerOpticsTable t;
  t.layers = layers.size();
  t.freqs = freq_ghz.size();
  const std::size_t n = t.layers * t.freqs;
  t.tau.resize(n);
  t.d_tau_d_scale.resize(n);
  t.d_tau_d_temperature.resize(n);
  t.source_k.resize(n);
  t.d_source_d_temperature.resize(n);
  std::vector<double> alpha(t.freqs);
  std::vector<AbsorptionPartials> partials(t.freqs);
  for (std::size_t i = 0; i < t.layers; ++i) {
    const AtmosphereLayer& l = layers[i];
    const GasState g = l.gas_state();
    absorption.total_absorption_with_partials(freq_ghz, g, alpha, partials);
    const double e = g.vapour_pressure_hpa;
    for (std::size_t f = 0; f < t.freqs; ++f) {
      const AbsorptionPartials& d = partials[f];
      // Vapour scaling at fixed total pressure: de = e ds, dp_dry = -e ds.
      const double d_alpha_d_scale = (d.d_vapour_pressure_per_hpa - d.d_dry_pressure_per_hpa) * e;
      // Temperature offset at fixed vapour density and total pressure: de = e/T dT.
      double d_alpha_d_t =
          d.d_temperature_per_k +
          (d.d_vapour_pressure_per_hpa - d.d_dry_pressure_per_hpa) * e / g.temperature_k;
      double a = alpha[f];
      if (l.liquid_density_kg_m3 > 0.0) {
        double d_kappa = 0.0;
        const double kappa =
            cloud_liquid_absorption_m2_per_kg(freq_ghz[f], g.temperature_k, &d_kappa);
        a += kappa * l.liquid_density_kg_m3;
        d_alpha_d_t += d_kappa * l.liquid_density_kg_m3;
      }
      const std::size_t k = i * t.freqs + f;
      t.tau[k] = a * layer_path_m[i];
      t.d_tau_d_scale[k] = d_alpha_d_scale * layer_path_m[i];
      t.d_tau_d_temperature[k] = d_alpha_d_t * layer_path_m[i];
      t.source_k[k] = rj_brightness_k(freq_ghz[f], g.temperature_k);
      t.d_source_d_temperature[k] = rj_brightness_derivative(freq_ghz[f], g.temperature_k);
    }
  }
  return t;
}

TransferWithJacobians transfer_with_jacobians(const LayerOpticsTable& optics,
                                              std::span<const double> freq_ghz,
                                              double cosmic_background_k) {
  const std::size_t nf = optics.freqs;
  const std::size_t nl = optics.layers;
  TransferWithJacobians out;
  out.rj_brightness_k.resize(nf);
  out.opacity_np.assign(nf, 0.0);
  out.d_scale.assign(nf, 0.0);
  out.d_temperature.assign(nf, 0.0);
  // Pass 1 (top down): radiance arriving at the top of each layer.
  std::vector<double> from_above(nl * nf);
  for (std::size_t f = 0; f < nf; ++f) {
    double radiance = rj_brightness_k(freq_ghz[f], cosmic_background_k);
    for (std::size_t i = nl; i-- > 0;) {
      const std::size_t k = i * nf + f;
      from_above[k] = radiance;
      const double t = std::exp(-optics.tau[k]);
      radiance = optics.source_k[k] * (1.0 - t) + t * radiance;
    }
    out.rj_brightness_k[f] = radiance;
  }
  // Pass 2 (bottom up): transmission below each layer and the derivatives
  // dJ/dtau_i = T_below t_i (B_i - R_above_i), dJ/dB_i = T_below (1 - t_i).
  for (std::size_t f = 0; f < nf; ++f) {
    double below = 1.0, d_scale = 0.0, d_temp = 0.0, opacity = 0.0;
    for (std::size_t i = 0; i < nl; ++i) {
      const std::size_t k = i * nf + f;
      const double t = std::exp(-optics.tau[k]);
      const double d_tau = below * t * (optics.source_k[k] - from_above[k]);
      d_scale += d_tau * optics.d_tau_d_scale[k];
      d_temp += d_tau * optics.d_tau_d_temperature[k] +
                below * (1.0 - t) * optics.d_source_d_temperature[k];
      opacity += optics.tau[k];
      below *= t;
    }
    out.d_scale[f] = d_scale;
    out.d_temperature[f] = d_temp;
    out.opacity_np[f] = opacity;
  }
  return out;
}

}  // namespace wvr::detail
