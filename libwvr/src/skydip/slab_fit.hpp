#pragma once
// The single-slab form of one channel's dip (see wvr/sky_dip.hpp):
//   y = offset + T_atm (1 - exp(-tau A)) + T_bg exp(-tau A),  A = 1 / sin(el) (plane-parallel),
// with a Gaussian prior on T_atm.

#include <span>

namespace wvr::detail {

struct SlabFitInput {
  std::span<const double> elevation_deg;
  std::span<const double> brightness_k;
  double noise_k = 1.0;
  double background_k = 0.0;  // RJ-equivalent cosmic background in the channel
  double temperature_prior_k = 0.0;
  double temperature_prior_sigma_k = 15.0;
  double opacity_start_np = 0.05;
  int max_iterations = 50;
};

struct SlabFitResult {
  double opacity_np = 0.0, opacity_sigma_np = 0.0;
  double temperature_k = 0.0, temperature_sigma_k = 0.0;
  double temperature_data_share = 0.0;
  double offset_k = 0.0, offset_sigma_k = 0.0;
  double rms_k = 0.0;
  bool converged = false;
};

// Plane-parallel airmass 1 / sin(el).
double plane_parallel_airmass(double elevation_deg);

SlabFitResult fit_slab(const SlabFitInput& input);

}  // namespace wvr::detail
