#include "wvr/water_vapour.hpp"

#include <cmath>

#include "wvr/constants.hpp"

namespace wvr {

double saturation_vapour_pressure_hpa(double temperature_k,
                                      double total_pressure_hpa,
                                      SaturationPhase phase) {
  const double t = temperature_k - 273.15;
  const bool ice = phase == SaturationPhase::kIce;
  const double a = ice ? 6.1115 : 6.1121;
  const double b = ice ? 23.036 : 18.678;
  const double c = ice ? 279.82 : 257.14;
  const double d = ice ? 333.7 : 234.5;
  double enhancement = 1.0;
  if (total_pressure_hpa > 0.0) {
    enhancement = ice ? 1.0 + 1e-4 * (2.2 + total_pressure_hpa * (0.0383 + 6.4e-6 * t * t))
                      : 1.0 + 1e-4 * (7.2 + total_pressure_hpa * (0.0320 + 5.9e-6 * t * t));
  }
  return enhancement * a * std::exp((b - t / d) * t / (t + c));
}

double vapour_density_kg_m3(double vapour_pressure_hpa, double temperature_k) {
  return vapour_pressure_hpa * 100.0 /
         (constants::water_vapour_gas_constant_j_per_kg_k * temperature_k);
}

double vapour_pressure_hpa(double vapour_density_kg_m3, double temperature_k) {
  return vapour_density_kg_m3 * constants::water_vapour_gas_constant_j_per_kg_k * temperature_k /
         100.0;
}

double vapour_pressure_from_dewpoint_hpa(double dewpoint_k) {
  return saturation_vapour_pressure_hpa(dewpoint_k, 0.0, SaturationPhase::kWater);
}

}  // namespace wvr
