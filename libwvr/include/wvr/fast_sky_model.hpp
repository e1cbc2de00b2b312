#pragma once
// Fast channel model for retrieval and real-time correction.
//
// Within a night the shape of the atmosphere changes slowly while the vapour column and the
// elevation change from sample to sample. FastSkyModel precomputes, for every layer and every
// passband quadrature frequency of one radiometer, the slant absorption coefficient and its
// temperature derivative as polynomials in PWV (Chebyshev interpolation on
// [0, max_pwv_mm] at degree `polynomial_degree`, evaluated in monomial form by Horner's
// rule). An evaluation is then a polynomial per layer and frequency, one vectorised exp and
// two passes of the transfer equation, with analytic Jacobians: no line-by-line work, no
// allocation (the caller owns a Workspace).
//
// Agreement with the exact SkyModel::channels is < 0.02 K over PWV 0.1-8 mm and elevation
// 15-90 deg (fast_sky_model_test). Differences come only from the polynomial fit and from the
// refracted ray geometry, which is taken from the base profile for every PWV.
//
// Example:
//   wvr::FastSkyModel fast(profile, radiometer);
//   auto ws = fast.make_workspace();
//   std::vector<double> tb(fast.channel_count()), d_pwv(tb.size()), d_t(tb.size());
//   fast.evaluate(1.2, 55.0, ws, tb, d_pwv, d_t);

#include <span>
#include <vector>

#include "wvr/atmosphere.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/sky_model.hpp"

namespace wvr {

struct FastSkyModelOptions {
  double max_pwv_mm = 12.0;  // upper end of the PWV domain (the lower end is 0)
  // Cloud liquid enters as a uniform layer at a fixed height; its absorption is linear in the
  // liquid water path (Rayleigh regime, ITU-R P.840), so it needs no polynomial.
  double cloud_base_above_ground_m = 1000.0;
  double cloud_thickness_m = 1000.0;
  double max_liquid_water_path_kg_m2 = 2.0;
  int polynomial_degree = 6;  // 5e-9 K interpolation error for the demo radiometers

  void validate() const;
};

enum class FastModelStatus {
  kOk = 0,
  kPwvOutOfDomain,        // pwv_mm < 0, > max_pwv_mm or NaN
  kElevationOutOfDomain,  // outside [min_elevation_deg, 90] or NaN
  kLiquidOutOfDomain,     // liquid_water_path_kg_m2 < 0, above the maximum or NaN
  kBufferSizeMismatch,    // an output span is not channel_count() long
};

// The per-sample state the fast model is evaluated at.
struct FastSkyState {
  double pwv_mm = 0.0;
  double elevation_deg = 90.0;
  double liquid_water_path_kg_m2 = 0.0;
};

// Optional outputs: each span is either empty (not computed) or channel_count() long.
struct FastSkyJacobians {
  std::span<double> d_pwv_k_per_mm;        // per mm of zenith PWV
  std::span<double> d_temperature;         // per K of profile temperature offset
  std::span<double> d_liquid_k_per_kg_m2;  // per kg/m^2 of zenith liquid water path
};

const char* to_string(FastModelStatus status);

class FastSkyModel {
 public:
  // Scratch memory of one evaluating thread.
  class Workspace {
   public:
    Workspace() = default;

   private:
    friend class FastSkyModel;
    std::vector<double> path_m, tau, transmission, d_tau_d_pwv, d_tau_d_t, from_above;
    std::vector<double> rj, d_rj_d_pwv, d_rj_d_t, d_rj_d_lwp, d_tau_d_lwp, t_below;
  };

  // Precomputes the tables for `radiometer` on the layers, temperatures and vapour shape of
  // `base_profile` (its PWV is irrelevant; it must hold some vapour). Throws InvalidInput.
  FastSkyModel(const AtmosphereProfile& base_profile,
               const RadiometerConfig& radiometer,
               const SkyModel& exact = SkyModel(),
               const FastSkyModelOptions& options = {});

  std::size_t channel_count() const { return channel_count_; }
  std::size_t layer_count() const { return layer_count_; }
  std::size_t frequency_count() const { return freq_ghz_.size(); }
  const FastSkyModelOptions& options() const { return options_; }
  double min_elevation_deg() const { return min_elevation_deg_; }

  Workspace make_workspace() const;

  // Channel brightness (RJ-equivalent, K) at `state` and the requested Jacobians (same
  // definitions as SkyModel::channels). Never throws and never allocates after
  // make_workspace(); out-of-domain input returns a status and leaves the outputs unset.
  FastModelStatus evaluate(const FastSkyState& state,
                           Workspace& workspace,
                           std::span<double> brightness_k,
                           const FastSkyJacobians& jacobians = {}) const noexcept;

  // Clear-sky shorthand.
  FastModelStatus evaluate(double pwv_mm,
                           double elevation_deg,
                           Workspace& workspace,
                           std::span<double> brightness_k,
                           std::span<double> d_brightness_d_pwv_k_per_mm = {},
                           std::span<double> d_brightness_d_temperature = {}) const noexcept {
    return evaluate(FastSkyState{pwv_mm, elevation_deg, 0.0}, workspace, brightness_k,
                    FastSkyJacobians{d_brightness_d_pwv_k_per_mm, d_brightness_d_temperature, {}});
  }

  // Slant wet path (m) per mm of zenith PWV at an elevation, on the base-profile geometry.
  double wet_path_per_pwv_m_per_mm(double elevation_deg) const noexcept;

 private:
  // Ray length in layer i for Bouguer invariant C = n_0 r_0 cos(e) (spherical) or 1/sin(e).
  double path_in_layer(std::size_t i, double invariant, double inv_sin) const noexcept;

  FastSkyModelOptions options_;
  std::size_t channel_count_ = 0;
  std::size_t layer_count_ = 0;
  double min_elevation_deg_ = 5.0;
  double cosmic_background_k_ = 2.725;
  bool plane_parallel_ = false;
  std::vector<double> freq_ghz_;     // quadrature frequencies, channel-major
  std::vector<double> node_weight_;  // passband weight of each frequency
  std::vector<std::size_t> channel_of_node_;
  std::vector<double> base_m_, top_m_, impact_scale_;  // geometry: r_i and 1 / n_i
  double ground_invariant_scale_ = 1.0;                // n_0 r_0
  std::vector<double> wet_refractivity_per_pwv_;       // N_w per mm PWV in each layer
  // Coefficients [layer][power][freq] of alpha(x), d alpha / d x and d alpha / dT in
  // x = 2 pwv / max_pwv - 1.
  std::vector<double> alpha_coeffs_, d_alpha_dx_coeffs_, d_alpha_dt_coeffs_;
  std::vector<double> source_k_, d_source_dt_;  // [layer][freq]
  // Absorption coefficient (Np/m) per kg/m^2 of liquid water path, [layer][freq]; zero
  // outside the cloud.
  std::vector<double> liquid_alpha_per_lwp_;
  std::vector<double> cosmic_k_;  // [freq]
};

}  // namespace wvr
