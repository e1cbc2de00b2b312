#pragma once
// Planck radiance expressed as a temperature.
//
// J(nu, T) = (h nu / k) / (exp(h nu / k T) - 1) is the Rayleigh-Jeans-equivalent
// brightness: the radiance B_nu(T) scaled by c^2 / (2 k nu^2), so it is linear in power and
// can be averaged over passbands and sidebands. For T >> h nu / k it tends to
// T - h nu / 2k (4.3988 K at 183.31 GHz). The inverse gives the Planck brightness
// temperature, the physical temperature of a blackbody with the same radiance.

#include <cmath>

#include "wvr/constants.hpp"

namespace wvr {

// h nu / k in kelvin for a frequency in GHz.
inline double planck_temperature_scale_k(double freq_ghz) {
  return constants::planck_j_s * freq_ghz * 1e9 / constants::boltzmann_j_per_k;
}

// Rayleigh-Jeans-equivalent brightness J(nu, T) in K; 0 for T <= 0.
inline double rj_brightness_k(double freq_ghz, double temperature_k) {
  if (temperature_k <= 0.0) return 0.0;
  const double x = planck_temperature_scale_k(freq_ghz);
  return x / std::expm1(x / temperature_k);
}

// dJ/dT at temperature T (dimensionless).
inline double rj_brightness_derivative(double freq_ghz, double temperature_k) {
  const double x = planck_temperature_scale_k(freq_ghz);
  const double u = x / temperature_k;
  const double em1 = std::expm1(u);
  return u * u * (em1 + 1.0) / (em1 * em1);
}

// Inverse of rj_brightness_k: the Planck brightness temperature (K) of radiance J; 0 for J <= 0.
inline double planck_brightness_k(double freq_ghz, double rj_k) {
  if (rj_k <= 0.0) return 0.0;
  const double x = planck_temperature_scale_k(freq_ghz);
  return x / std::log1p(x / rj_k);
}

}  // namespace wvr
