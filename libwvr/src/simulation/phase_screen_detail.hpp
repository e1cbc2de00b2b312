#pragma once
// Internals of the turbulence path screens (wvr/phase_screen.hpp), shared by the
// phase_screen_*.cpp files and the unit tests. Not installed. Their own namespace keeps generic
// helper names (quadrature rules) apart from other modules' internals.

#include <cstddef>
#include <cstdint>
#include <functional>
#include <vector>

#include "core/gauss_legendre.hpp"

namespace wvr {
struct TurbulentLayer;
struct ScreenGrid;
}  // namespace wvr

namespace wvr::detail::screen {

// Integral of f over [a, b] with the n-point Gauss-Legendre rule.
double integrate_panel(const std::function<double(double)>& f, double a, double b, int points);

// The dimensionless slab integral
//   I(s) = integral_0^inf (1 + (u/s)^2)^(-11/6) sinc^2(u) du,   s > 0,
// which carries the thick/thin shape of the slab spectrum. Limits: I -> pi/2 for s >> 1
// (thick) and I -> s * sqrt(pi) Gamma(4/3) / (2 Gamma(11/6)) for s << 1 (thin).
// Direct quadrature (slow, accurate to ~1e-7 relative):
double slab_integral_direct(double s);
// Table lookup (cubic interpolation in log-log, asymptotes outside the table):
double slab_integral(double s);
// ln I(s) from the table, taking ln s; the screen generator's inner loop.
double log_slab_integral(double log_s) noexcept;

// 1 - J0(x), accurate to ~1e-11 absolute and without cancellation at small x.
double one_minus_bessel_j0(double x) noexcept;

// Unit-amplitude slab spectrum Phi(kappa) = 4 W a^(-11/3) I(a W / 2), a^2 = kappa^2 + k0^2.
struct SlabShape {
  double thickness_m = 0.0;
  double k0_rad_per_m = 0.0;  // 2 pi / outer scale
  double operator()(double kappa_rad_per_m) const noexcept;
};

// ln Phi of SlabShape from ln a^2 = ln(kappa^2 + k0^2) and ln(W / 2); the screen generator's
// inner loop (one log and one exp per FFT cell).
double log_slab_shape(double log_a2, double log_half_thickness) noexcept;

// D(d) = 4 pi integral_0^inf kappa Phi(kappa) (1 - J0(kappa d)) dkappa for an isotropic 2-D
// spectrum that is flat below `low_kappa` and falls as kappa^(-11/3) above `high_kappa`.
double hankel_structure_function(const std::function<double(double)>& spectrum,
                                 double separation_m,
                                 double low_kappa,
                                 double high_kappa);

// 4 pi integral_0^inf kappa Phi(kappa) dkappa = D(infinity), same assumptions.
double hankel_saturation(const std::function<double(double)>& spectrum,
                         double low_kappa,
                         double high_kappa);

// The constant c with c * D_unit(reference_baseline_m) = path_rms_at_reference_m^2, where
// D_unit is the structure function of SlabShape. Assumes a validated layer.
double slab_normalisation(const TurbulentLayer& layer);

// Path values (m) of one screen realisation on a validated grid, [j_across][i_along]; see
// phase_screen_generate.cpp for the method.
std::vector<float> generate_path_screen(const TurbulentLayer& layer,
                                        const ScreenGrid& grid,
                                        std::uint64_t seed,
                                        int subharmonic_levels);

// Smallest n' >= n whose only prime factors are 2, 3 and 5 (fast FFT lengths).
std::size_t next_fft_size(std::size_t n);

}  // namespace wvr::detail::screen
