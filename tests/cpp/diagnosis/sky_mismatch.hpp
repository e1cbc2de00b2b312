#pragma once
// A simulated night made to differ from the model that retrieves it, as real skies and real
// radiometers do: per-antenna, per-channel offsets and gains, and a smooth systematic
// brightness pattern (growing with airmass, drifting slowly over the night) such as a
// different absorption model or temperature profile leaves.

#include <cstdint>

#include "wvr/night.hpp"

namespace wvr::test {

struct SkyMismatch {
  double offset_min_k = 1.0, offset_max_k = 2.0;  // |offset| per antenna and channel
  double gain_min = 0.02, gain_max = 0.05;        // |gain - 1| per antenna and channel
  double pattern_k = 1.0;                         // per channel, x (airmass - 1) and drift
  std::uint32_t seed = 7;
};

// Applies T' = gain T + offset + pattern(channel, airmass, time) to every finite brightness.
void add_sky_mismatch(Night& night, const SkyMismatch& mismatch = {});

}  // namespace wvr::test
