#pragma once
// Radiometer channel configuration and passband quadrature.
//
// A radiometer mixes the sky signal against a local oscillator (LO) at lo_freq_ghz; each
// channel is an intermediate-frequency (IF) band [if_centre - bandwidth/2, if_centre +
// bandwidth/2]. A double-sideband channel receives both LO - IF and LO + IF, weighted by
// its sideband ratio; a single-sideband channel receives one of them. The channel output is
// the gain-weighted mean of the Rayleigh-Jeans-equivalent brightness (i.e. of power) over
// the passband, which is what a linear, load-calibrated radiometer measures.
//
// Example (TOML, see testdata/radiometers/):
//   name = "demo 183 GHz radiometer"
//   lo_freq_ghz = 183.31
//   [[channels]]
//   name = "inner"
//   if_centre_ghz = 1.1
//   bandwidth_ghz = 0.4
//   sideband = "double"      # "double", "upper" or "lower"
//   sideband_ratio = 1.0     # upper / lower gain, double sideband only
//   noise_k = 0.08           # rms brightness noise per sample

#include <filesystem>
#include <string>
#include <vector>

namespace wvr {

enum class Sideband { kDouble, kUpper, kLower };

struct RadiometerChannel {
  std::string name;
  double if_centre_ghz = 0.0;
  double bandwidth_ghz = 0.0;
  Sideband sideband = Sideband::kDouble;
  // Upper-sideband gain divided by lower-sideband gain; used for kDouble only.
  double sideband_ratio = 1.0;
  // Rms brightness noise of one sample (K).
  double noise_k = 0.0;
};

struct RadiometerConfig {
  std::string name;
  double lo_freq_ghz = 0.0;
  std::vector<RadiometerChannel> channels;
  // Gauss-Legendre nodes per sideband per channel; the default is within 0.001 K of the
  // converged passband average for the bundled designs (quadrature convergence test).
  int quadrature_points_per_sideband = 4;

  // Checks every field; throws InvalidInput naming the first bad one (empty channel list,
  // non-positive or overlapping bands, band edge at or below 0 GHz IF, sky frequency
  // outside 1-1000 GHz, non-positive sideband ratio, negative noise, NaN anywhere, a channel
  // name used twice).
  void validate() const;
};

// One sky frequency with its weight in a channel's passband average (weights of a channel
// sum to 1).
struct QuadratureNode {
  double freq_ghz = 0.0;
  double weight = 0.0;
};

// Nodes of each channel: result[c] lists the sky frequencies and weights of channel c.
std::vector<std::vector<QuadratureNode>> channel_quadrature(const RadiometerConfig& config);

// Reads a radiometer configuration from a TOML file and validates it. Throws InvalidInput
// naming the file and the field on any problem.
RadiometerConfig load_radiometer_config(const std::filesystem::path& path);
// Same, from TOML text; `source_name` is used in error messages.
RadiometerConfig parse_radiometer_config(const std::string& toml_text,
                                         const std::string& source_name = "<string>");

std::string to_string(Sideband sideband);

}  // namespace wvr
