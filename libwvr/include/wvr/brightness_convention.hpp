#pragma once
// Which brightness a night's radiometer values hold, and conversion between the two.
//
// libwvr works with the Rayleigh-Jeans-equivalent brightness J = (h nu / k) / (exp(h nu / k T)
// - 1) (wvr/planck.hpp): linear in radiance, what a radiometer calibrated on loads entered as
// J(T_load) reports. Some systems report the Planck brightness temperature T instead, which
// is higher by about h nu / 2k (4.4 K at 183 GHz). A night file says which one it holds
// (libwvr/FORMAT.md, /radiometer attribute brightness_convention); readers convert Planck
// values to J on read.
//
// Conversion of a channel: its value is taken as the Planck brightness temperature at the
// channel's gain-weighted mean sky frequency nu_c (double sideband: (r nu_upper + nu_lower) /
// (1 + r), r the sideband ratio), J = J(nu_c, T). Since J(nu, T) = T - h nu / 2k +
// (h nu / k)^2 / (12 T) + ..., linear in nu to first order, the error of using nu_c instead of
// averaging over the passband is of order (h dnu / k)^2 / (12 T): below 1e-4 K for the bundled
// designs (dnu <= 8 GHz, T > 10 K).

#include <span>
#include <string>

#include "wvr/radiometer.hpp"

namespace wvr {

enum class BrightnessConvention {
  kRayleighJeansEquivalent,  // "rayleigh_jeans_equivalent" (libwvr's, and absent = this)
  kPlanck,                   // "planck": Planck brightness temperature
};

std::string to_string(BrightnessConvention convention);
// Throws InvalidInput naming `field` and the value for an unknown name.
BrightnessConvention brightness_convention_from_string(const std::string& name,
                                                       const std::string& field);

// Gain-weighted mean sky frequency of a channel (GHz), the frequency of the conversion.
double convention_frequency_ghz(const RadiometerChannel& channel, double lo_freq_ghz);

// In place, brightness [..., channel] (row-major, channel last): Planck brightness temperature
// to Rayleigh-Jeans-equivalent brightness, and back. NaN and values <= 0 are left as they are.
void planck_to_rj_equivalent(const RadiometerConfig& radiometer, std::span<double> brightness_k);
void rj_equivalent_to_planck(const RadiometerConfig& radiometer, std::span<double> brightness_k);

}  // namespace wvr
