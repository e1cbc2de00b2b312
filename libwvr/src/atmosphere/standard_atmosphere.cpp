#include "wvr/standard_atmosphere.hpp"

#include <array>
#include <cmath>

#include "wvr/error.hpp"

namespace wvr {
namespace {

struct Layer1976 {
  double base_geopotential_km;
  double lapse_k_per_km;  // dT/dH
  double base_temperature_k;
  double base_pressure_hpa;
};

// Base values of U.S. Standard Atmosphere 1976, Table 4 (pressures rounded as in P.835-6).
constexpr std::array<Layer1976, 7> kLayers = {{
    {0.0, -6.5, 288.15, 1013.25},
    {11.0, 0.0, 216.65, 226.3226},
    {20.0, 1.0, 216.65, 54.74980},
    {32.0, 2.8, 228.65, 8.680422},
    {47.0, 0.0, 270.65, 1.109106},
    {51.0, -2.8, 270.65, 0.6694167},
    {71.0, -2.0, 214.65, 0.03956649},
}};
constexpr double kEarthRadiusKm = 6356.766;
constexpr double kHydrostaticConstantKPerKm = 34.1632;  // g0 M0 / R*

}  // namespace

StandardAtmosphereLevel us_standard_atmosphere_1976(double height_m) {
  require_in_range("height_m", height_m, 0.0, 86000.0, "m");
  const double z_km = height_m / 1000.0;
  const double h_km = kEarthRadiusKm * z_km / (kEarthRadiusKm + z_km);
  std::size_t i = kLayers.size() - 1;
  while (i > 0 && h_km < kLayers[i].base_geopotential_km) --i;
  const Layer1976& layer = kLayers[i];
  const double dh = h_km - layer.base_geopotential_km;
  StandardAtmosphereLevel level;
  level.temperature_k = layer.base_temperature_k + layer.lapse_k_per_km * dh;
  if (layer.lapse_k_per_km == 0.0) {
    level.pressure_hpa = layer.base_pressure_hpa *
                         std::exp(-kHydrostaticConstantKPerKm * dh / layer.base_temperature_k);
  } else {
    level.pressure_hpa =
        layer.base_pressure_hpa * std::pow(layer.base_temperature_k / level.temperature_k,
                                           kHydrostaticConstantKPerKm / layer.lapse_k_per_km);
  }
  return level;
}

double p835_reference_vapour_density_kg_m3(double height_m) {
  require_finite("height_m", height_m);
  return 7.5e-3 * std::exp(-height_m / 2000.0);
}

}  // namespace wvr
