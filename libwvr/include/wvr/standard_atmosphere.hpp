#pragma once
// Standard atmospheres used as defaults and as test references.

namespace wvr {

struct StandardAtmosphereLevel {
  double temperature_k = 0.0;
  double pressure_hpa = 0.0;
};

// U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF, 1976), lower 86 km: seven layers of
// constant lapse rate in geopotential altitude H = r0 z / (r0 + z), r0 = 6356.766 km;
// g0 M0 / R* = 34.1632 K/km. The ITU-R P.835-6 mean annual global reference atmosphere
// uses the same temperature and pressure (P.835-6 Annex 1, section 1.1).
// Valid for geometric height 0 <= height_m <= 86000; throws InvalidInput otherwise.
StandardAtmosphereLevel us_standard_atmosphere_1976(double height_m);

// Water-vapour density (kg/m^3) of the ITU-R P.835-6 mean annual global reference
// atmosphere: rho = 7.5 exp(-h / 2 km) g/m^3 (P.835-6 eq. 6), with h geometric height.
// (P.835 also caps the mixing ratio at 2e-6 above the height where it falls that low; the
// density there is below 1e-5 g/m^3 and is not modelled.)
double p835_reference_vapour_density_kg_m3(double height_m);

}  // namespace wvr
