#include "sky/fast_kernels.hpp"

#include <algorithm>
#include <cstdint>
#include <cstring>

#include "core/simd_dispatch.hpp"

namespace wvr::detail {

namespace {

// out[f] = scale * sum_m c[m * nf + f] x^m for one layer's [power][freq] table.
inline void horner(const double* __restrict c,
                   std::size_t np,
                   std::size_t nf,
                   double x,
                   double scale,
                   double* __restrict out) {
  const std::size_t top = np - 1;
  for (std::size_t f = 0; f < nf; ++f) out[f] = c[top * nf + f];
  for (std::size_t m = top; m-- > 0;) {
    const double* cm = c + m * nf;
    for (std::size_t f = 0; f < nf; ++f) out[f] = out[f] * x + cm[f];
  }
  for (std::size_t f = 0; f < nf; ++f) out[f] *= scale;
}

}  // namespace

// Per layer: tau = alpha(x) ds, d tau / d pwv and d tau / dT, by Horner's rule in x over the
// [layer][power][freq] coefficient tables.
WVR_VECTOR_CLONES
void evaluate_layer_polynomials(const double* __restrict alpha,
                                const double* __restrict d_alpha_dx,
                                const double* __restrict d_alpha_dt,
                                const double* __restrict path_m,
                                std::size_t nl,
                                std::size_t np,
                                std::size_t nf,
                                double x,
                                double dx_dpwv,
                                double* __restrict tau,
                                double* __restrict d_tau_d_pwv,
                                double* __restrict d_tau_d_t) {
  if (d_alpha_dx != nullptr && d_alpha_dt != nullptr) {
    // All three: one fused pass over the powers keeps the accumulators hot.
    const std::size_t top = np - 1;
    for (std::size_t i = 0; i < nl; ++i) {
      const double* a = alpha + i * np * nf;
      const double* da = d_alpha_dx + i * np * nf;
      const double* dt = d_alpha_dt + i * np * nf;
      double* out = tau + i * nf;
      double* out_x = d_tau_d_pwv + i * nf;
      double* out_t = d_tau_d_t + i * nf;
      for (std::size_t f = 0; f < nf; ++f) {
        out[f] = a[top * nf + f];
        out_x[f] = 0.0;
        out_t[f] = dt[top * nf + f];
      }
      for (std::size_t m = top; m-- > 0;) {
        const double* am = a + m * nf;
        const double* dam = da + m * nf;
        const double* dtm = dt + m * nf;
        for (std::size_t f = 0; f < nf; ++f) {
          out[f] = out[f] * x + am[f];
          out_x[f] = out_x[f] * x + dam[f];
          out_t[f] = out_t[f] * x + dtm[f];
        }
      }
      const double ds = path_m[i];
      const double ds_dx = ds * dx_dpwv;
      for (std::size_t f = 0; f < nf; ++f) {
        out[f] *= ds;
        out_x[f] *= ds_dx;
        out_t[f] *= ds;
      }
    }
    return;
  }
  for (std::size_t i = 0; i < nl; ++i) {
    const double ds = path_m[i];
    horner(alpha + i * np * nf, np, nf, x, ds, tau + i * nf);
    // The derivative tables have one power fewer (the top coefficient is zero).
    if (d_alpha_dx != nullptr)
      horner(d_alpha_dx + i * np * nf, np - 1, nf, x, ds * dx_dpwv, d_tau_d_pwv + i * nf);
    if (d_alpha_dt != nullptr) horner(d_alpha_dt + i * np * nf, np, nf, x, ds, d_tau_d_t + i * nf);
  }
}

// Top-down pass: radiance arriving at the top of each layer, and at the ground.
WVR_VECTOR_CLONES
void transfer_down(const double* __restrict transmission,
                   const double* __restrict source,
                   const double* __restrict cosmic,
                   std::size_t nl,
                   std::size_t nf,
                   double* __restrict from_above,
                   double* __restrict radiance) {
  for (std::size_t f = 0; f < nf; ++f) radiance[f] = cosmic[f];
  for (std::size_t i = nl; i-- > 0;) {
    const double* t = transmission + i * nf;
    const double* s = source + i * nf;
    double* above = from_above + i * nf;
    for (std::size_t f = 0; f < nf; ++f) {
      above[f] = radiance[f];
      radiance[f] = s[f] + t[f] * (radiance[f] - s[f]);
    }
  }
}

WVR_VECTOR_CLONES
void add_liquid_opacity(const double* __restrict alpha_per_lwp,
                        const double* __restrict path_m,
                        std::size_t nl,
                        std::size_t nf,
                        double lwp,
                        double* __restrict tau,
                        double* __restrict d_tau_d_lwp) {
  for (std::size_t i = 0; i < nl; ++i) {
    const double ds = path_m[i];
    for (std::size_t f = 0; f < nf; ++f) {
      const double per_lwp = alpha_per_lwp[i * nf + f] * ds;
      d_tau_d_lwp[i * nf + f] = per_lwp;
      tau[i * nf + f] += lwp * per_lwp;
    }
  }
}

// Bottom-up pass: dJ/dtau_i = T_below t_i (B_i - R_above_i), dJ/dB_i = T_below (1 - t_i).
WVR_VECTOR_CLONES
void transfer_jacobians(const double* __restrict transmission,
                        const double* __restrict source,
                        const double* __restrict d_source_dt,
                        const double* __restrict from_above,
                        const double* __restrict d_tau_d_pwv,
                        const double* __restrict d_tau_d_t,
                        const double* __restrict d_tau_d_lwp,
                        std::size_t nl,
                        std::size_t nf,
                        double* __restrict t_below,
                        double* __restrict d_pwv,
                        double* __restrict d_t,
                        double* __restrict d_lwp) {
  for (std::size_t f = 0; f < nf; ++f) {
    d_pwv[f] = 0.0;
    d_t[f] = 0.0;
    d_lwp[f] = 0.0;
    t_below[f] = 1.0;
  }
  for (std::size_t i = 0; i < nl; ++i) {
    const std::size_t k = i * nf;
    if (d_tau_d_lwp != nullptr) {
      for (std::size_t f = 0; f < nf; ++f) {
        const double t = transmission[k + f];
        const double d_tau = t_below[f] * t * (source[k + f] - from_above[k + f]);
        d_pwv[f] += d_tau * d_tau_d_pwv[k + f];
        d_t[f] += d_tau * d_tau_d_t[k + f] + t_below[f] * (1.0 - t) * d_source_dt[k + f];
        d_lwp[f] += d_tau * d_tau_d_lwp[k + f];
        t_below[f] *= t;
      }
    } else {
      for (std::size_t f = 0; f < nf; ++f) {
        const double t = transmission[k + f];
        const double d_tau = t_below[f] * t * (source[k + f] - from_above[k + f]);
        d_pwv[f] += d_tau * d_tau_d_pwv[k + f];
        d_t[f] += d_tau * d_tau_d_t[k + f] + t_below[f] * (1.0 - t) * d_source_dt[k + f];
        t_below[f] *= t;
      }
    }
  }
}

// exp(-tau), written so the compiler vectorises it (Eigen's exp is tied to the baseline
// instruction set). Cody-Waite reduction x = n ln2 + r with
// |r| <= ln2 / 2, a degree-12 Taylor polynomial for exp(r) (truncation < 4e-16 relative) and
// 2^n assembled in the exponent bits; tau above 700 gives 0 transmission (exp(-700) < 1e-304).
WVR_VECTOR_CLONES
void exp_negative(const double* __restrict tau, std::size_t n, double* __restrict out) {
  constexpr double kLog2e = 1.4426950408889634;
  constexpr double kLn2High = 0.6931471803691238;  // ln 2 split for exact n * ln2_high
  constexpr double kLn2Low = 1.9082149292705877e-10;
  constexpr double kShifter = 6755399441055744.0;  // 1.5 * 2^52: rounds to integer in the mantissa
  constexpr std::size_t kBlock = 64;
  // Separate floating-point and integer loops so that each vectorises.
  alignas(64) double poly[kBlock];
  alignas(64) double shifted[kBlock];
  alignas(64) std::int64_t poly_bits[kBlock];
  alignas(64) std::int64_t shift_bits[kBlock];
  for (std::size_t start = 0; start < n; start += kBlock) {
    const std::size_t width = std::min(kBlock, n - start);
    for (std::size_t k = 0; k < width; ++k) {
      const double t = tau[start + k];
      const double x = t > 700.0 ? -700.0 : -t;
      const double sh = x * kLog2e + kShifter;
      const double nd = sh - kShifter;
      const double r = (x - nd * kLn2High) - nd * kLn2Low;
      double p = 1.0 / 479001600.0;
      p = p * r + 1.0 / 39916800.0;
      p = p * r + 1.0 / 3628800.0;
      p = p * r + 1.0 / 362880.0;
      p = p * r + 1.0 / 40320.0;
      p = p * r + 1.0 / 5040.0;
      p = p * r + 1.0 / 720.0;
      p = p * r + 1.0 / 120.0;
      p = p * r + 1.0 / 24.0;
      p = p * r + 1.0 / 6.0;
      p = p * r + 0.5;
      p = p * r + 1.0;
      p = p * r + 1.0;
      poly[k] = p;
      shifted[k] = sh;
    }
    std::memcpy(poly_bits, poly, sizeof(double) * width);
    std::memcpy(shift_bits, shifted, sizeof(double) * width);
    // The low mantissa bits of `shifted` hold n (two's complement); add n to the exponent.
    for (std::size_t k = 0; k < width; ++k) poly_bits[k] += shift_bits[k] << 52;
    std::memcpy(out + start, poly_bits, sizeof(double) * width);
  }
}

}  // namespace wvr::detail
