#pragma once
// Absorption by cloud liquid water in the Rayleigh regime, ITU-R P.840-9 (08/2023) section 2.
//
// K_l = 0.819 f / (eps'' (1 + eta^2)) (dB/km)/(g/m^3), eta = (2 + eps') / eps'', with the
// double-Debye permittivity of liquid water (P.840-9 section 2; coefficients from memory,
// verified in tests against ITU-Rpy's P.840-9 table):
//   theta = 300 / T, eps0 = 77.66 + 103.3 (theta - 1), eps1 = 0.0671 eps0, eps2 = 3.52,
//   fp = 20.20 - 146 (theta - 1) + 316 (theta - 1)^2 GHz, fs = 39.8 fp.
// Valid for droplets much smaller than the wavelength (clouds, not rain), up to 1000 GHz.

namespace wvr {

// Mass absorption coefficient of cloud liquid, (Np/m) per (kg/m^3) of liquid water content,
// i.e. m^2/kg. Multiply by the liquid water content to get an absorption coefficient.
double cloud_liquid_absorption_m2_per_kg(double freq_ghz, double temperature_k);

// Same with its derivative with respect to temperature (m^2/kg per K) in *d_per_k.
double cloud_liquid_absorption_m2_per_kg(double freq_ghz, double temperature_k, double* d_per_k);

// P.840 specific attenuation coefficient K_l in (dB/km)/(g/m^3), for comparison with tables.
double cloud_liquid_specific_attenuation_db_per_km_per_g_m3(double freq_ghz, double temperature_k);

}  // namespace wvr
