#pragma once
// Internal pieces of the transfer calculation shared by the exact and the fast sky models.

#include <span>
#include <vector>

#include "wvr/absorption.hpp"
#include "wvr/atmosphere.hpp"
#include "wvr/sky_model.hpp"

namespace wvr::detail {

// Geometric ray length (m) in each layer for an apparent elevation at the ground.
std::vector<double> layer_path_lengths_m(const AtmosphereProfile& profile,
                                         double elevation_deg,
                                         const SkyOptions& options);

// Per layer (outer) and frequency (inner, contiguous): slant opacity and its derivatives with
// respect to the vapour scale factor and a uniform temperature offset, plus the layer's
// Rayleigh-Jeans source brightness and its temperature derivative.
struct LayerOpticsTable {
  std::size_t layers = 0;
  std::size_t freqs = 0;
  std::vector<double> tau, d_tau_d_scale, d_tau_d_temperature;  // [layer * freqs + f]
  std::vector<double> source_k, d_source_d_temperature;         // [layer * freqs + f]
};

LayerOpticsTable exact_layer_optics(const AtmosphereProfile& profile,
                                    std::span<const double> freq_ghz,
                                    std::span<const double> layer_path_m,
                                    const AbsorptionModel& absorption);

struct TransferWithJacobians {
  std::vector<double> rj_brightness_k;
  std::vector<double> opacity_np;
  std::vector<double> d_scale;        // dJ / d(vapour scale)
  std::vector<double> d_temperature;  // dJ / d(temperature offset)
};

TransferWithJacobians transfer_with_jacobians(const LayerOpticsTable& optics,
                                              std::span<const double> freq_ghz,
                                              double cosmic_background_k);

}  // namespace wvr::detail
