#pragma once
// Vectorised inner loops of the fast sky model. Each is compiled for baseline x86-64 and for
// AVX2 + FMA (see simd_dispatch.hpp); fast_kernels_test checks them against plain code.

#include <cstddef>

namespace wvr::detail {

// Per layer i and frequency f: tau = alpha(x) ds_i, d tau / d pwv = alpha'(x) ds_i dx/dpwv and
// d tau / dT = alpha_T(x) ds_i, by Horner's rule over [layer][power][freq] coefficient tables
// of np = degree + 1 powers. A null derivative table skips that derivative.
void evaluate_layer_polynomials(const double* alpha,
                                const double* d_alpha_dx,
                                const double* d_alpha_dt,
                                const double* path_m,
                                std::size_t nl,
                                std::size_t np,
                                std::size_t nf,
                                double x,
                                double dx_dpwv,
                                double* tau,
                                double* d_tau_d_pwv,
                                double* d_tau_d_t);

// Adds the cloud-liquid opacity lwp * kappa_i(f) ds_i to tau and stores its derivative with
// respect to lwp in d_tau_d_lwp.
void add_liquid_opacity(const double* alpha_per_lwp,
                        const double* path_m,
                        std::size_t nl,
                        std::size_t nf,
                        double lwp,
                        double* tau,
                        double* d_tau_d_lwp);

// out[k] = exp(-tau[k]) for tau[k] >= 0 (relative error < 1e-15; 0 beyond tau = 700).
void exp_negative(const double* tau, std::size_t n, double* out);

// Top-down transfer pass over [layer][freq] arrays: radiance arriving at the top of each layer
// (from_above) and at the ground (radiance), starting from the cosmic background.
void transfer_down(const double* transmission,
                   const double* source,
                   const double* cosmic,
                   std::size_t nl,
                   std::size_t nf,
                   double* from_above,
                   double* radiance);

// Bottom-up pass: dJ/d(pwv), dJ/dT and (when d_tau_d_lwp is not null) dJ/d(lwp) per
// frequency from
// dJ/dtau_i = T_below t_i (B_i - R_above_i) and dJ/dB_i = T_below (1 - t_i).
void transfer_jacobians(const double* transmission,
                        const double* source,
                        const double* d_source_dt,
                        const double* from_above,
                        const double* d_tau_d_pwv,
                        const double* d_tau_d_t,
                        const double* d_tau_d_lwp,
                        std::size_t nl,
                        std::size_t nf,
                        double* t_below,
                        double* d_pwv,
                        double* d_t,
                        double* d_lwp);

}  // namespace wvr::detail
