#include "wvr/sky_model.hpp"

#include <cmath>
#include <numbers>

#include "sky/radiative_transfer.hpp"
#include "wvr/cloud_liquid.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/planck.hpp"

namespace wvr {

void SkyOptions::validate() const {
  require_in_range("cosmic_background_k", cosmic_background_k, 0.0, 10.0, "K");
  require_in_range("min_elevation_deg", min_elevation_deg, 1.0, 90.0, "deg");
}

SkyModel::SkyModel(std::shared_ptr<const AbsorptionModel> absorption, SkyOptions options)
    : absorption_(std::move(absorption)), options_(options) {
  if (!absorption_) throw InvalidInput("absorption model is null");
  options_.validate();
}

namespace {

void check_elevation(double elevation_deg, const SkyOptions& options) {
  require_in_range("elevation_deg", elevation_deg, options.min_elevation_deg, 90.0, "deg");
}

void check_frequencies(std::span<const double> freq_ghz) {
  if (freq_ghz.empty()) throw InvalidInput("freq_ghz is empty");
  for (std::size_t i = 0; i < freq_ghz.size(); ++i) {
    require_in_range("freq_ghz[" + std::to_string(i) + "]", freq_ghz[i], 1.0, 1000.0, "GHz");
  }
}

}  // namespace

SlantPath SkyModel::slant_path(const AtmosphereProfile& profile, double elevation_deg) const {
  check_elevation(elevation_deg, options_);
  const auto& layers = profile.layers();
  SlantPath path;
  path.layer_path_m = detail::layer_path_lengths_m(profile, elevation_deg, options_);
  double vertical = 0.0, slant = 0.0;
  for (std::size_t i = 0; i < layers.size(); ++i) {
    const AtmosphereLayer& l = layers[i];
    const GasState g = l.gas_state();
    const double ds = path.layer_path_m[i];
    vertical += l.thickness_m();
    slant += ds;
    path.wet_path_m +=
        1e-6 * wet_refractivity(g.vapour_pressure_hpa, g.temperature_k, options_.refractivity) * ds;
    path.hydrostatic_path_m += 1e-6 *
                               hydrostatic_refractivity(g.dry_pressure_hpa, g.vapour_pressure_hpa,
                                                        g.temperature_k, options_.refractivity) *
                               ds;
    path.pwv_slant_mm += l.vapour_density_kg_m3 * ds;
  }
  path.airmass = slant / vertical;
  return path;
}

SkySpectrum SkyModel::spectrum(const AtmosphereProfile& profile,
                               std::span<const double> freq_ghz,
                               double elevation_deg) const {
  check_frequencies(freq_ghz);
  check_elevation(elevation_deg, options_);
  const std::vector<double> ds = detail::layer_path_lengths_m(profile, elevation_deg, options_);
  const std::size_t nf = freq_ghz.size();
  const auto& layers = profile.layers();

  SkySpectrum out;
  out.freq_ghz.assign(freq_ghz.begin(), freq_ghz.end());
  out.pwv_mm = profile.pwv_mm();
  out.elevation_deg = elevation_deg;
  out.model = absorption_->name();
  // Top-down accumulation: radiance arriving from above each layer.
  std::vector<double> radiance(nf), opacity(nf, 0.0), dry(nf), water(nf);
  for (std::size_t f = 0; f < nf; ++f) {
    radiance[f] = rj_brightness_k(freq_ghz[f], options_.cosmic_background_k);
  }
  for (std::size_t i = layers.size(); i-- > 0;) {
    const AtmosphereLayer& l = layers[i];
    absorption_->absorption(freq_ghz, l.gas_state(), dry, water);
    for (std::size_t f = 0; f < nf; ++f) {
      double alpha = dry[f] + water[f];
      if (l.liquid_density_kg_m3 > 0.0) {
        alpha += l.liquid_density_kg_m3 *
                 cloud_liquid_absorption_m2_per_kg(freq_ghz[f], l.temperature_k);
      }
      const double tau = alpha * ds[i];
      const double t = std::exp(-tau);
      radiance[f] = rj_brightness_k(freq_ghz[f], l.temperature_k) * (1.0 - t) + t * radiance[f];
      opacity[f] += tau;
    }
  }
  out.rj_brightness_k = radiance;
  out.opacity_np = opacity;
  out.brightness_k.resize(nf);
  out.transmission.resize(nf);
  for (std::size_t f = 0; f < nf; ++f) {
    out.brightness_k[f] = planck_brightness_k(freq_ghz[f], radiance[f]);
    out.transmission[f] = std::exp(-opacity[f]);
  }
  return out;
}

ChannelBrightness SkyModel::channels(const AtmosphereProfile& profile,
                                     const RadiometerConfig& radiometer,
                                     double elevation_deg) const {
  radiometer.validate();
  check_elevation(elevation_deg, options_);
  const double pwv = profile.pwv_mm();
  if (!(pwv > 0.0)) {
    throw InvalidInput(describe_value("pwv_mm", pwv) +
                       ": channel Jacobians need a profile that holds water vapour");
  }
  const auto quadrature = channel_quadrature(radiometer);
  std::vector<double> freqs;
  for (const auto& nodes : quadrature) {
    for (const QuadratureNode& n : nodes) freqs.push_back(n.freq_ghz);
  }
  const std::vector<double> ds = detail::layer_path_lengths_m(profile, elevation_deg, options_);
  const detail::LayerOpticsTable optics =
      detail::exact_layer_optics(profile, freqs, ds, *absorption_);
  const detail::TransferWithJacobians rt =
      detail::transfer_with_jacobians(optics, freqs, options_.cosmic_background_k);

  const SlantPath path = slant_path(profile, elevation_deg);
  ChannelBrightness out;
  out.pwv_mm = pwv;
  out.elevation_deg = elevation_deg;
  out.wet_path_m = path.wet_path_m;
  // Wet refractivity is linear in vapour density at fixed temperature, so the slant wet path
  // scales with PWV.
  out.d_wet_path_d_pwv_m_per_mm = path.wet_path_m / pwv;
  std::size_t k = 0;
  for (const auto& nodes : quadrature) {
    double tb = 0.0, d_pwv = 0.0, d_t = 0.0;
    for (const QuadratureNode& n : nodes) {
      tb += n.weight * rt.rj_brightness_k[k];
      d_pwv += n.weight * rt.d_scale[k];
      d_t += n.weight * rt.d_temperature[k];
      ++k;
    }
    out.brightness_k.push_back(tb);
    // d/d(scale) with scale = PWV' / PWV, so d/dPWV = d/d(scale) / PWV.
    out.d_brightness_d_pwv_k_per_mm.push_back(d_pwv / pwv);
    out.d_brightness_d_temperature.push_back(d_t);
    out.path_sensitivity_k_per_mm.push_back(d_pwv / pwv / (out.d_wet_path_d_pwv_m_per_mm * 1000.0));
  }
  return out;
}

}  // namespace wvr
