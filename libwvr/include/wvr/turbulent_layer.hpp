#pragma once
// Turbulent layers: what a layer is (medium, height, thickness, wind, outer scale, strength)
// and the slab (von Karman) spectrum and structure function of its excess path, shared by
// the simulator's phase screens and the structure-function fits of the diagnosis.
//
// Physics (textbook material, sources named where used in
// libwvr/src/turbulence/phase_screen_spectrum.cpp and libwvr/src/simulation/phase_screen_*.cpp):
//  * 3-D refractivity fluctuations follow the von Karman spectrum
//      Phi_3D(k) = c * (k^2 + k0^2)^(-11/6),  k0 = 2 pi / outer_scale_m
//    (Kolmogorov's -11/3 law with an outer scale; Tatarskii 1961, "Wave propagation in a
//    turbulent medium", from memory).
//  * The path through a slab of thickness W is the vertical integral of the refractivity, so
//    its 2-D spectrum is
//      Phi_2D(kappa) = integral dk_z Phi_3D(sqrt(kappa^2 + k_z^2)) * W^2 sinc^2(k_z W / 2)
//    and its structure function is the Hankel transform
//      D(d) = 4 pi * integral kappa Phi_2D(kappa) (1 - J0(kappa d)) dkappa.
//    D grows as d^(5/3) for d << W ("thick"), as d^(2/3) for W << d << L0 ("thin") and
//    saturates beyond the outer scale (Stotskii 1992; Lay 1997, A&AS 122, 535; from memory).
//  * Frozen flow (Taylor): path(r, t) = screen(r - v t), so D(tau) = D(|v| tau).
//
// Conventions: wavenumbers are angular (rad/m). Phi_2D is normalised so that the path
// covariance is B(rho) = integral d^2kappa Phi_2D(kappa) exp(i kappa.rho); it has units of
// m^2 of path per (rad/m)^2, i.e. m^4. Positions are local east/north in metres, times in s.

#include <cstddef>
#include <vector>

namespace wvr {

// Which medium a layer's fluctuations are in.
enum class LayerKind {
  kWet,  // water vapour: changes the sky brightness, so the radiometers see it
  kDry,  // temperature/pressure (dry air): changes the path only, invisible to radiometers
};

// One turbulent layer. Amplitude convention: path_rms_at_reference_m is the rms path
// difference between two points reference_baseline_m apart, sqrt(D(reference_baseline_m)),
// with the layer's full thick/thin/outer-scale shape applied. It is the number a user quotes
// as "0.5 mm rms on a 1 km baseline" (zenith path; slant-path factors are the caller's).
struct TurbulentLayer {
  double height_m = 1000.0;        // slab centre above the array (m); for the caller's geometry
  double thickness_m = 1000.0;     // slab thickness W (m), > 0
  double outer_scale_m = 10000.0;  // von Karman outer scale L0 (m), > 0
  double wind_east_m_s = 10.0;     // air velocity, east component (m/s); the screen moves with it
  double wind_north_m_s = 0.0;     // air velocity, north component (m/s)
  double path_rms_at_reference_m = 0.5e-3;  // sqrt(D(reference_baseline_m)) (m), >= 0
  double reference_baseline_m = 1000.0;     // baseline of that amplitude (m), > 0
  LayerKind kind = LayerKind::kWet;
};

// Throws InvalidInput naming the first bad field (non-finite values, thickness_m <= 0,
// outer_scale_m <= 0, height_m < 0, path_rms_at_reference_m < 0, reference_baseline_m <= 0).
void validate_layer(const TurbulentLayer& layer);

// Theoretical second-order statistics of one layer's path screen.
//
// The slab integral over k_z is done numerically once per process in the dimensionless form
//   Phi_2D(kappa) = 4 W c a^(-11/3) I(a W / 2),  a = sqrt(kappa^2 + k0^2),
//   I(s) = integral_0^inf (1 + (u/s)^2)^(-11/6) sinc^2(u) du,
// and tabulated in log-log; the Hankel transform for D(d) is done by quadrature on demand.
// The constant c is chosen so that D(reference_baseline_m) = path_rms_at_reference_m^2.
class LayerSpectrum {
 public:
  // Validates the layer (throws InvalidInput) and computes the normalisation.
  explicit LayerSpectrum(const TurbulentLayer& layer);

  const TurbulentLayer& layer() const noexcept { return layer_; }

  // Phi_2D(kappa) in m^4 (path m^2 per (rad/m)^2) at angular wavenumber kappa >= 0.
  double spectrum_m4(double wavenumber_rad_per_m) const noexcept;

  // Theoretical path structure function D(d) in m^2; d >= 0 (throws InvalidInput otherwise).
  double structure_function_m2(double separation_m) const;

  // D(infinity) = 2 * path variance, in m^2: the saturation level beyond the outer scale.
  double saturation_m2() const;

 private:
  TurbulentLayer layer_;
  double normalisation_ = 0.0;  // c above, so that D(reference) matches the requested rms
};

}  // namespace wvr
