#pragma once
// Water-vapour thermodynamics: saturation pressure and humidity conversions.

namespace wvr {

enum class SaturationPhase { kWater, kIce };

// Saturation vapour pressure (hPa) over a plane surface of liquid water or ice, ITU-R
// P.453-13 (12/2017) eqs. (9)-(10) (Buck 1981 form):
//   es = EF * a * exp[(b - t/d) t / (t + c)],  t in deg C,
//   water: a 6.1121, b 18.678, c 257.14, d 234.5, EF = 1 + 1e-4 [7.2 + P (0.0320 + 5.9e-6 t^2)]
//   ice:   a 6.1115, b 23.036, c 279.82, d 333.7, EF = 1 + 1e-4 [2.2 + P (0.0383 + 6.4e-6 t^2)]
// The enhancement factor EF accounts for moist air and applies when total_pressure_hpa > 0;
// pass 0 for the pure-vapour value (EF = 1).
double saturation_vapour_pressure_hpa(double temperature_k,
                                      double total_pressure_hpa = 0.0,
                                      SaturationPhase phase = SaturationPhase::kWater);

// Vapour density (kg/m^3) from partial pressure (hPa) and temperature (K): ideal gas,
// rho = e / (R_v T). Equivalent to P.453's rho = 216.7 e / T g/m^3.
double vapour_density_kg_m3(double vapour_pressure_hpa, double temperature_k);

// Partial pressure (hPa) from vapour density (kg/m^3) and temperature (K).
double vapour_pressure_hpa(double vapour_density_kg_m3, double temperature_k);

// Vapour pressure (hPa) at dew point td over liquid water (P.453 water form, EF = 1).
double vapour_pressure_from_dewpoint_hpa(double dewpoint_k);

}  // namespace wvr
