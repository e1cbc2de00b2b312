#include "wvr/refractivity.hpp"

#include <cmath>
#include <numbers>

#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {

double RefractivityConstants::k2_prime_k_per_hpa() const {
  return k2_k_per_hpa - constants::vapour_dry_molar_mass_ratio * k1_k_per_hpa;
}

double hydrostatic_refractivity(double dry_pressure_hpa,
                                double vapour_pressure_hpa,
                                double temperature_k,
                                const RefractivityConstants& k) {
  return k.k1_k_per_hpa *
         (dry_pressure_hpa + constants::vapour_dry_molar_mass_ratio * vapour_pressure_hpa) /
         temperature_k;
}

double wet_refractivity(double vapour_pressure_hpa,
                        double temperature_k,
                        const RefractivityConstants& k) {
  return (k.k2_prime_k_per_hpa() + k.k3_k2_per_hpa / temperature_k) * vapour_pressure_hpa /
         temperature_k;
}

double saastamoinen_zenith_hydrostatic_delay_m(double surface_pressure_hpa,
                                               double latitude_deg,
                                               double height_m) {
  require_in_range("surface_pressure_hpa", surface_pressure_hpa, 0.0, 1100.0, "hPa");
  require_in_range("latitude_deg", latitude_deg, -90.0, 90.0, "deg");
  require_in_range("height_m", height_m, -500.0, 10000.0, "m");
  const double phi = latitude_deg * std::numbers::pi / 180.0;
  return 0.0022768 * surface_pressure_hpa /
         (1.0 - 0.00266 * std::cos(2.0 * phi) - 0.00028 * height_m / 1000.0);
}

double bevis_wet_delay_per_pwv(double surface_temperature_k, const RefractivityConstants& k) {
  require_in_range("surface_temperature_k", surface_temperature_k, 180.0, 330.0, "K");
  const double tm = 70.2 + 0.72 * surface_temperature_k;
  // k in K/hPa -> K/Pa: divide by 100; rho_w in kg/m^3, R_v in J/(kg K).
  const double k2p = k.k2_prime_k_per_hpa() / 100.0;
  const double k3 = k.k3_k2_per_hpa / 100.0;
  return 1e-6 * constants::liquid_water_density_kg_per_m3 *
         constants::water_vapour_gas_constant_j_per_kg_k * (k3 / tm + k2p);
}

}  // namespace wvr
