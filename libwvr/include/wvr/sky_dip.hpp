#pragma once
// Sky dips: elevation scans of a radiometer, simulated from the sky model and fitted two ways.
//
// A radiometer with per-channel offset o_c (K) and gain g_c reads
//   y_c(el) = o_c + g_c T_sky,c(el) + noise,
// T_sky,c the channel's Rayleigh-Jeans-equivalent passband brightness (wvr/sky_model.hpp).
//
// Layered fit: T_sky,c(el; PWV) from the layered sky model (the site profile scaled to PWV,
// spherical refracted rays), PWV shared by the channels, o_c and g_c per channel; weighted least
// squares (weights from the channels' noise_k), Levenberg-Marquardt, uncertainties from the
// covariance scaled by the reduced chi-square. A gain is only seen through the curvature of
// brightness against airmass or in a channel near saturation (in a thin channel g_c and the
// opacity enter as a product), so every gain carries a Gaussian prior (1 +/- gain_prior_sigma);
// the result says, per channel, which share of the gain's information came from the data. A
// channel near saturation barely changes over the dip, so its offset and gain trade against each
// other: the offset's uncertainty shows it and the result notes the correlation.
// Derived per channel: zenith opacity (passband-weighted mean of the zenith opacity at the
// channel's quadrature frequencies) and the effective atmospheric temperature (layer
// temperatures weighted by the layers' zenith opacity in the channel).
//
// Slab fit, per channel: y_c = o_c + T_atm,c (1 - exp(-tau_c A)) + T_bg,c exp(-tau_c A), with the
// plane-parallel airmass A = 1 / sin(el) and T_bg,c the RJ-equivalent cosmic background (2.725 K)
// in the channel (0.4 K at 183 GHz; a known term, not fitted). The gain is not fitted: it is
// exactly degenerate with T_atm (only g T_atm is seen), so the slab's T_atm is g T_atm. In a thin
// channel T_atm and tau enter as a product too, so T_atm carries a Gaussian prior centred on the
// layered fit's RJ-equivalent effective temperature (slab_temperature_prior_sigma_k); the result
// says which share of T_atm's information came from the data. The slab's zenith opacity is
// compared with the layered fit's; relative differences above slab_agreement_tolerance are noted.
// The slab form holds for an isothermal, thin atmosphere; a thick or warm one (opacity-weighted
// temperature that changes with airmass, a channel near saturation) makes it differ.
//
// Usage:
//   auto dips = wvr::simulate_sky_dips(profile, radiometer, units, {});
//   wvr::SkyDipFit fit = wvr::fit_sky_dip(dips[0], profile, radiometer);

#include <cstdint>
#include <filesystem>
#include <iosfwd>
#include <string>
#include <vector>

#include "wvr/atmosphere.hpp"
#include "wvr/radiometer.hpp"

namespace wvr {

// One radiometer's elevation scan: samples in time order.
struct SkyDip {
  std::string antenna;
  std::vector<double> time_s;
  std::vector<double> elevation_deg;
  std::vector<std::vector<double>> brightness_k;  // [sample][channel], RJ-equivalent
};

// A simulated radiometer's calibration error: per channel (one value for all channels allowed).
struct SkyDipUnit {
  std::string antenna;
  std::vector<double> offset_k;
  std::vector<double> gain;
};

struct SkyDipSimulationOptions {
  // Elevations visited in order, each held for dwell_s with one sample per sample_interval_s.
  std::vector<double> elevation_deg = {90.0, 60.0, 45.0, 35.0, 30.0, 25.0, 20.0};
  double dwell_s = 5.0;
  double sample_interval_s = 1.0;
  std::string absorption_model = "p676";  // key, see absorption_model_keys()
  bool add_noise = true;                  // channel noise_k per sample
  std::uint64_t seed = 1;

  void validate() const;
};

// One dip per unit through the same sky. Throws InvalidInput naming the bad field.
std::vector<SkyDip> simulate_sky_dips(const AtmosphereProfile& profile,
                                      const RadiometerConfig& radiometer,
                                      const std::vector<SkyDipUnit>& units,
                                      const SkyDipSimulationOptions& options = {});

struct SkyDipFitOptions {
  std::string absorption_model = "p676";
  double gain_prior_sigma = 0.05;  // radiometer gains are good to a few per cent (common practice)
  double slab_temperature_prior_sigma_k = 15.0;
  double slab_agreement_tolerance = 0.02;  // relative opacity difference noted above this
  // A parameter counts as constrained by the data when the data give at least this share of its
  // information (1 - posterior variance / prior variance, before chi-square scaling).
  double min_data_information_share = 0.5;
  // Offset and gain of a channel whose |correlation| exceeds this are noted as degenerate.
  double max_offset_gain_correlation = 0.95;
  int max_iterations = 50;

  void validate() const;
};

struct SkyDipChannelFit {
  std::string channel;
  // Layered model.
  double offset_k = 0.0, offset_sigma_k = 0.0;
  double gain = 1.0, gain_sigma = 0.0;
  double gain_data_share = 0.0;  // share of the gain's information from the data
  double zenith_opacity_np = 0.0, zenith_opacity_sigma_np = 0.0;
  double effective_temperature_k = 0.0;     // physical, opacity-weighted
  double effective_rj_temperature_k = 0.0;  // RJ-equivalent, opacity-weighted
  // Slab form.
  double slab_opacity_np = 0.0, slab_opacity_sigma_np = 0.0;
  double slab_temperature_k = 0.0, slab_temperature_sigma_k = 0.0;  // g T_atm, RJ-equivalent
  double slab_temperature_data_share = 0.0;
  double slab_offset_k = 0.0, slab_offset_sigma_k = 0.0;
  double slab_rms_k = 0.0;
  double slab_opacity_difference = 0.0;  // slab / layered - 1
  std::string note;                      // empty when nothing to say
};

struct SkyDipFit {
  std::string antenna;
  std::string model;  // absorption model name
  double pwv_mm = 0.0, pwv_sigma_mm = 0.0;
  double reduced_chi_square = 0.0;
  double rms_k = 0.0;  // layered fit residual rms over all channels
  int samples = 0;
  int elevations = 0;  // distinct elevations
  bool converged = false;
  std::vector<SkyDipChannelFit> channels;
  std::vector<std::string> notes;  // what was fixed or set by a prior, and disagreements
  std::string airmass_model;       // the slab's airmass
};

// Fits one dip. `profile` gives the site's temperature, pressure and vapour shape (its PWV is
// only the starting point). Throws InvalidInput for fewer than 3 distinct elevations, non-finite
// values, elevations outside the model's range or a brightness row of the wrong width.
SkyDipFit fit_sky_dip(const SkyDip& dip,
                      const AtmosphereProfile& profile,
                      const RadiometerConfig& radiometer,
                      const SkyDipFitOptions& options = {});

// Dips as CSV: a header "time_s,antenna,elevation_deg,<channel>,..." (brightness columns in K,
// RJ-equivalent, named by the radiometer's channels, any order, extra columns ignored), one
// sample per line, '#' lines skipped; one dip per antenna in order of first appearance. Errors
// name the source, the line and the column.
std::vector<SkyDip> parse_sky_dip_csv(std::istream& in,
                                      const RadiometerConfig& radiometer,
                                      const std::string& source_name = "<stream>");
std::vector<SkyDip> read_sky_dip_csv(const std::filesystem::path& path,
                                     const RadiometerConfig& radiometer);
void write_sky_dip_csv(std::ostream& out,
                       const std::vector<SkyDip>& dips,
                       const RadiometerConfig& radiometer);

}  // namespace wvr
