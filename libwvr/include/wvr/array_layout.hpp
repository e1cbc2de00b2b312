#pragma once
// Antenna layouts for simulated arrays: built-in generators and explicit positions.

#include <array>
#include <cstdint>
#include <string>
#include <vector>

namespace wvr {

enum class LayoutKind {
  kCompact,   // hexagonal packing at min_spacing_m, a few jitters: short baselines only
  kExtended,  // three logarithmic arms out to radius_m: baselines from ~min_spacing_m to km
  kRandom,    // uniform inside radius_m, no two antennas closer than min_spacing_m
  kExplicit,  // positions given by the user
};

struct ArrayLayoutSpec {
  LayoutKind kind = LayoutKind::kExtended;
  int antenna_count = 40;
  double min_spacing_m = 15.0;
  double radius_m = 3000.0;
  std::vector<std::array<double, 3>> explicit_enu_m;  // kExplicit only

  // Throws InvalidInput naming the field: antenna_count outside [2, 200], spacing <= 0,
  // radius too small for the count, explicit list of the wrong size or non-finite.
  void validate() const;
};

// Local east/north/up positions (m) of every antenna; deterministic for a seed.
std::vector<std::array<double, 3>> make_array_layout(const ArrayLayoutSpec& spec,
                                                     std::uint64_t seed);

LayoutKind layout_kind_from_string(const std::string& name);  // throws InvalidInput
std::string to_string(LayoutKind kind);

}  // namespace wvr
