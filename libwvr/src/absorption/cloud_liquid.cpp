#include "wvr/cloud_liquid.hpp"

#include <ceres/jet.h>

namespace wvr {
namespace {

template <typename S>
S specific_attenuation_db_per_km_per_g_m3(double f, const S& temperature_k) {
  const S theta = 300.0 / temperature_k;
  const S eps0 = 77.66 + 103.3 * (theta - 1.0);
  const S eps1 = 0.0671 * eps0;
  const double eps2 = 3.52;
  const S fp = 20.20 - 146.0 * (theta - 1.0) + 316.0 * (theta - 1.0) * (theta - 1.0);
  const S fs = 39.8 * fp;
  const S rp = f / fp;
  const S rs = f / fs;
  const S eps_imag =
      f * (eps0 - eps1) / (fp * (1.0 + rp * rp)) + f * (eps1 - eps2) / (fs * (1.0 + rs * rs));
  const S eps_real = (eps0 - eps1) / (1.0 + rp * rp) + (eps1 - eps2) / (1.0 + rs * rs) + eps2;
  const S eta = (2.0 + eps_real) / eps_imag;
  return 0.819 * f / (eps_imag * (1.0 + eta * eta));
}

// (dB/km)/(g/m^3) -> (Np/m)/(kg/m^3): 1 dB/km = 1/4342.94 Np/m and 1 g/m^3 = 1e-3 kg/m^3.
constexpr double kConversion = 1e3 / 4342.944819032518;

}  // namespace

double cloud_liquid_specific_attenuation_db_per_km_per_g_m3(double freq_ghz, double temperature_k) {
  return specific_attenuation_db_per_km_per_g_m3(freq_ghz, temperature_k);
}

double cloud_liquid_absorption_m2_per_kg(double freq_ghz, double temperature_k) {
  return kConversion * specific_attenuation_db_per_km_per_g_m3(freq_ghz, temperature_k);
}

double cloud_liquid_absorption_m2_per_kg(double freq_ghz, double temperature_k, double* d_per_k) {
  using Jet = ceres::Jet<double, 1>;
  const Jet k = specific_attenuation_db_per_km_per_g_m3(freq_ghz, Jet(temperature_k, 0));
  if (d_per_k != nullptr) *d_per_k = kConversion * k.v[0];
  return kConversion * k.a;
}

}  // namespace wvr
