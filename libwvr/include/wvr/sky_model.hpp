#pragma once
// Line-by-line sky emission model: upward-looking radiative transfer through a layered
// atmosphere along the slant path, per frequency and per radiometer channel.
//
// Brightness conventions (all in K):
// - rj_brightness_k: Rayleigh-Jeans-equivalent brightness J = (c^2 / 2 k nu^2) I_nu, linear in
//   radiance. This is what a hot/cold-load calibrated radiometer reports when the loads are
//   entered as J(T_load); one that enters loads as physical temperatures reports
//   J + h nu / 2k (4.4 K at 183 GHz) to within ~0.1 K. Channel brightnesses are passband and
//   sideband averages of J (averaging power, as the receiver does).
// - brightness_k: Planck brightness temperature, the inverse Planck function of the radiance:
//   the temperature of a blackbody of the same radiance.
//
// Transfer: J_sky = sum_i J(T_i) (1 - exp(-tau_i)) exp(-sum_{j<i} tau_j) + J(T_cmb) exp(-tau),
// layer i counted upward from the antenna, tau_i = alpha_i ds_i, cosmic background 2.725 K.
//
// Jacobians are defined as:
// - d/dPWV: every layer's vapour density scaled by the same factor (profile shape, total
//   pressure and temperature fixed);
// - d/dT: a uniform temperature offset of every layer (the "surface temperature" derivative
//   of a lapse-rate profile at fixed level pressures and vapour densities);
// in both cases the refracted ray geometry of the unperturbed profile is held fixed (bending
// changes airmass by < 1e-5 per K or per mm at 15 deg elevation).
//
// Example:
//   wvr::SiteParameters site;  site.altitude_m = 5000; ...; site.pwv_mm = 1.0;
//   auto profile = wvr::make_parametric_profile(site);
//   wvr::SkyModel sky;
//   auto spectrum = sky.spectrum(profile, std::vector<double>{183.31, 230.0}, 45.0);

#include <memory>
#include <span>
#include <string>
#include <vector>

#include "wvr/absorption.hpp"
#include "wvr/atmosphere.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/refractivity.hpp"

namespace wvr {

enum class RayGeometry {
  kSpherical,      // concentric shells; refracted if SkyOptions::refraction (the default)
  kPlaneParallel,  // ds = dz / sin(elevation), no refraction; for comparisons and tests
};

struct SkyOptions {
  RayGeometry geometry = RayGeometry::kSpherical;
  bool refraction = true;  // Bouguer's invariant n r cos(e) = const through the layers
  double cosmic_background_k = 2.725;
  double min_elevation_deg = 5.0;
  RefractivityConstants refractivity = RefractivityConstants::thayer_1974();

  void validate() const;
};

struct SkySpectrum {
  std::vector<double> freq_ghz;
  std::vector<double> brightness_k;     // Planck brightness temperature
  std::vector<double> rj_brightness_k;  // Rayleigh-Jeans-equivalent brightness
  std::vector<double> opacity_np;       // total slant opacity
  std::vector<double> transmission;     // exp(-opacity)
  double pwv_mm = 0.0;
  double elevation_deg = 0.0;
  std::string model;
};

// Slant path quantities through the modelled layers.
struct SlantPath {
  std::vector<double> layer_path_m;  // geometric length of the ray in each layer
  double airmass = 0.0;              // slant / vertical length of the modelled column
  double wet_path_m = 0.0;           // 1e-6 * integral of N_w ds
  double hydrostatic_path_m = 0.0;   // 1e-6 * integral of N_h ds (modelled layers only)
  double pwv_slant_mm = 0.0;         // vapour column along the ray
};

struct ChannelBrightness {
  std::vector<double> brightness_k;                 // RJ-equivalent, passband average
  std::vector<double> d_brightness_d_pwv_k_per_mm;  // per mm of zenith PWV
  std::vector<double> d_brightness_d_temperature;   // K per K of profile temperature offset
  std::vector<double> path_sensitivity_k_per_mm;    // dT_b / dL_wet, K per mm of slant wet path
  double pwv_mm = 0.0;
  double elevation_deg = 0.0;
  double wet_path_m = 0.0;                 // slant wet path
  double d_wet_path_d_pwv_m_per_mm = 0.0;  // slant wet path per mm of zenith PWV
};

class SkyModel {
 public:
  explicit SkyModel(std::shared_ptr<const AbsorptionModel> absorption = make_p676_annex1_model(),
                    SkyOptions options = {});

  const AbsorptionModel& absorption_model() const { return *absorption_; }
  const SkyOptions& options() const { return options_; }

  // Brightness, opacity and transmission at each frequency (1-1000 GHz) for an elevation in
  // [min_elevation_deg, 90]. Throws InvalidInput for out-of-range or non-finite input.
  SkySpectrum spectrum(const AtmosphereProfile& profile,
                       std::span<const double> freq_ghz,
                       double elevation_deg) const;

  // Ray geometry and refractive path through the profile.
  SlantPath slant_path(const AtmosphereProfile& profile, double elevation_deg) const;

  // Channel brightness of a radiometer with Jacobians and path sensitivities. The profile
  // must hold water vapour (pwv_mm > 0) for the PWV derivative to be defined.
  ChannelBrightness channels(const AtmosphereProfile& profile,
                             const RadiometerConfig& radiometer,
                             double elevation_deg) const;

 private:
  std::shared_ptr<const AbsorptionModel> absorption_;
  SkyOptions options_;
};

}  // namespace wvr
