#pragma once
// Radio refractivity and tropospheric path delay.
//
// N = k1 P_d / T + k2 e / T + k3 e / T^2 (N-units; P_d, e in hPa, T in K). libwvr splits it
// the geodetic way (Davis et al. 1985, Radio Sci. 20, 1593) into a hydrostatic part that
// depends only on total air density and a wet part that follows the water vapour:
//   N_h = k1 (P_d + eps e) / T,   N_w = k2' e / T + k3 e / T^2,   k2' = k2 - eps k1,
// with eps = M_w / M_d. The hydrostatic part integrates to the Saastamoinen delay; the wet
// part is what radiometers track.

namespace wvr {

struct RefractivityConstants {
  double k1_k_per_hpa = 77.6;
  double k2_k_per_hpa = 64.8;
  double k3_k2_per_hpa = 3.776e5;

  // Thayer (1974), Radio Sci. 9, 803 (the default).
  static RefractivityConstants thayer_1974() { return {77.6, 64.8, 3.776e5}; }
  // Bevis et al. (1994), J. Appl. Meteorol. 33, 379: k1 77.60, k2 70.4, k3 3.739e5.
  static RefractivityConstants bevis_1994() { return {77.60, 70.4, 3.739e5}; }
  // ITU-R P.453-14 eq. (6) constants: N = 77.6 P_d / T + 72 e / T + 3.75e5 e / T^2.
  static RefractivityConstants itu_p453() { return {77.6, 72.0, 3.75e5}; }
  // k2' = k2 - (M_w / M_d) k1.
  double k2_prime_k_per_hpa() const;
};

// Hydrostatic refractivity N_h (N-units).
double hydrostatic_refractivity(double dry_pressure_hpa,
                                double vapour_pressure_hpa,
                                double temperature_k,
                                const RefractivityConstants& k = {});
// Wet refractivity N_w (N-units).
double wet_refractivity(double vapour_pressure_hpa,
                        double temperature_k,
                        const RefractivityConstants& k = {});

// Saastamoinen (1972) zenith hydrostatic delay (m) with the Davis et al. (1985) gravity term:
// ZHD = 0.0022768 P / (1 - 0.00266 cos 2 phi - 0.00028 H_km), P surface pressure in hPa.
double saastamoinen_zenith_hydrostatic_delay_m(double surface_pressure_hpa,
                                               double latitude_deg,
                                               double height_m);

// Bevis et al. (1992), J. Geophys. Res. 97, 15787: zenith wet delay per unit PWV,
// Pi^-1 = 1e-6 rho_w R_v (k3 / Tm + k2'), with Tm = 70.2 + 0.72 Ts the mean temperature.
double bevis_wet_delay_per_pwv(double surface_temperature_k, const RefractivityConstants& k = {});

}  // namespace wvr
