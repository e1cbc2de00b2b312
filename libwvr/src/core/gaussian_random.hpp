#pragma once
// Portable random deviates: the output of std::mt19937_64 is fully specified by the standard,
// unlike std::normal_distribution's, so simulations reproduce bit for bit across standard
// libraries for a given seed.

#include <cmath>
#include <complex>
#include <cstdint>
#include <numbers>
#include <random>

namespace wvr::detail {

// Uniform deviate in (0, 1] from the top 53 bits of the engine.
inline double uniform_open(std::mt19937_64& rng) {
  return (static_cast<double>(rng() >> 11) + 1.0) * 0x1.0p-53;
}

// Box-Muller: real and imaginary parts are independent standard normal deviates (E|z|^2 = 2).
inline std::complex<double> complex_gaussian(std::mt19937_64& rng) {
  const double radius = std::sqrt(-2.0 * std::log(uniform_open(rng)));
  const double angle = 2.0 * std::numbers::pi * uniform_open(rng);
  return {radius * std::cos(angle), radius * std::sin(angle)};
}

// Standard normal deviates, two per Box-Muller draw.
class GaussianSource {
 public:
  explicit GaussianSource(std::uint64_t seed) : rng_(seed) {}
  double next() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const std::complex<double> z = complex_gaussian(rng_);
    spare_ = z.imag();
    has_spare_ = true;
    return z.real();
  }
  double uniform() { return uniform_open(rng_); }

 private:
  std::mt19937_64 rng_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

}  // namespace wvr::detail
