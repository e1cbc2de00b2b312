#pragma once
// Physical constants used across libwvr, SI units. Sources are named beside each value.

namespace wvr::constants {

// CODATA 2018 exact values (SI redefinition 2019).
inline constexpr double planck_j_s = 6.62607015e-34;
inline constexpr double boltzmann_j_per_k = 1.380649e-23;
inline constexpr double speed_of_light_m_per_s = 299792458.0;

// Cosmic microwave background temperature, 2.725 K (Fixsen 2009, ApJ 707, 916: 2.72548 K).
inline constexpr double cosmic_background_k = 2.725;

// Standard gravity (CGPM 1901 definition; also the U.S. Standard Atmosphere 1976 value).
inline constexpr double standard_gravity_m_per_s2 = 9.80665;
// Mean Earth radius used for gravity fall-off and spherical ray geometry (IUGG mean
// radius R1, 6371.0088 km, Moritz 2000, Geodetic Reference System 1980).
inline constexpr double earth_radius_m = 6371008.8;

// Specific gas constants: dry air R_d = R*/M_d with R* = 8.314462618 J/(mol K) (CODATA
// 2018) and M_d = 28.9644 g/mol (U.S. Standard Atmosphere 1976); water vapour
// R_v = R*/M_w with M_w = 18.01528 g/mol.
inline constexpr double dry_air_gas_constant_j_per_kg_k = 287.0578;
inline constexpr double water_vapour_gas_constant_j_per_kg_k = 461.5228;
// Ratio of molar masses M_w / M_d (same sources).
inline constexpr double vapour_dry_molar_mass_ratio = 0.621977;

// Density of liquid water used to turn a vapour column into precipitable water:
// 1 kg/m^2 of vapour = 1 mm of liquid at 1000 kg/m^3 (common practice; the 0.0025 %
// difference from the 999.975 kg/m^3 maximum density is negligible).
inline constexpr double liquid_water_density_kg_per_m3 = 1000.0;

}  // namespace wvr::constants
