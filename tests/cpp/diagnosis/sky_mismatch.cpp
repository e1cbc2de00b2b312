// A night the retrieval's model did not make (sky_mismatch.hpp).
#include "sky_mismatch.hpp"

#include <cmath>
#include <numbers>
#include <random>
#include <vector>

namespace wvr::test {

void add_sky_mismatch(Night& night, const SkyMismatch& m) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  std::mt19937 rng(m.seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  auto signed_between = [&](double lo, double hi) {
    const double magnitude = lo + (hi - lo) * unit(rng);
    return unit(rng) < 0.5 ? -magnitude : magnitude;
  };
  std::vector<double> offset(na * nc), gain(na * nc), airmass_k(nc), drift_k(nc);
  for (std::size_t i = 0; i < na * nc; ++i) {
    offset[i] = signed_between(m.offset_min_k, m.offset_max_k);
    gain[i] = 1.0 + signed_between(m.gain_min, m.gain_max);
  }
  for (std::size_t c = 0; c < nc; ++c) {
    airmass_k[c] = m.pattern_k * (0.5 + unit(rng));
    drift_k[c] = m.pattern_k * signed_between(0.3, 0.6);
  }
  const double duration_s = night.radiometer.time_s.back() - night.radiometer.time_s.front();
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t k = 0; k < nt; ++k) {
      const double elevation_rad =
          night.pointing.elevation_deg[a * nt + k] * std::numbers::pi / 180.0;
      const double airmass = 1.0 / std::sin(elevation_rad);
      const double phase = (night.radiometer.time_s[k] - night.radiometer.time_s.front()) /
                           std::max(1.0, duration_s);
      for (std::size_t c = 0; c < nc; ++c) {
        double& t = night.radiometer.brightness_k[(a * nt + k) * nc + c];
        if (!std::isfinite(t)) continue;
        t = gain[a * nc + c] * t + offset[a * nc + c] + airmass_k[c] * (airmass - 1.0) +
            drift_k[c] * std::sin(std::numbers::pi * phase);
      }
    }
  }
}

}  // namespace wvr::test
