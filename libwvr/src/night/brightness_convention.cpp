#include "wvr/brightness_convention.hpp"

#include <cmath>

#include "wvr/error.hpp"
#include "wvr/planck.hpp"

namespace wvr {

std::string to_string(BrightnessConvention convention) {
  return convention == BrightnessConvention::kPlanck ? "planck" : "rayleigh_jeans_equivalent";
}

BrightnessConvention brightness_convention_from_string(const std::string& name,
                                                       const std::string& field) {
  if (name == "rayleigh_jeans_equivalent") return BrightnessConvention::kRayleighJeansEquivalent;
  if (name == "planck") return BrightnessConvention::kPlanck;
  throw InvalidInput(field + " = \"" + name +
                     "\" is not \"rayleigh_jeans_equivalent\" or \"planck\"");
}

double convention_frequency_ghz(const RadiometerChannel& channel, double lo_freq_ghz) {
  const double upper = lo_freq_ghz + channel.if_centre_ghz;
  const double lower = lo_freq_ghz - channel.if_centre_ghz;
  switch (channel.sideband) {
    case Sideband::kUpper:
      return upper;
    case Sideband::kLower:
      return lower;
    case Sideband::kDouble:
      break;
  }
  const double r = channel.sideband_ratio;
  return (r * upper + lower) / (1.0 + r);
}

namespace {

template <typename Convert>
void convert(const RadiometerConfig& radiometer, std::span<double> brightness_k, Convert fn) {
  const std::size_t nc = radiometer.channels.size();
  if (nc == 0) return;
  std::vector<double> freq(nc);
  for (std::size_t c = 0; c < nc; ++c)
    freq[c] = convention_frequency_ghz(radiometer.channels[c], radiometer.lo_freq_ghz);
  for (std::size_t i = 0; i < brightness_k.size(); ++i) {
    double& v = brightness_k[i];
    if (std::isfinite(v) && v > 0.0) v = fn(freq[i % nc], v);
  }
}

}  // namespace

void planck_to_rj_equivalent(const RadiometerConfig& radiometer, std::span<double> brightness_k) {
  convert(radiometer, brightness_k, [](double f, double t) { return rj_brightness_k(f, t); });
}

void rj_equivalent_to_planck(const RadiometerConfig& radiometer, std::span<double> brightness_k) {
  convert(radiometer, brightness_k, [](double f, double j) { return planck_brightness_k(f, j); });
}

}  // namespace wvr
