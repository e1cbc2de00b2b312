#include "wvr/array_layout.hpp"

#include <cmath>
#include <numbers>
#include <random>

#include "wvr/error.hpp"

namespace wvr {

void ArrayLayoutSpec::validate() const {
  if (kind == LayoutKind::kExplicit) {
    if (explicit_enu_m.size() < 2 || explicit_enu_m.size() > 200) {
      throw InvalidInput("array positions: " + std::to_string(explicit_enu_m.size()) +
                         " antennas given; between 2 and 200 are supported");
    }
    for (std::size_t i = 0; i < explicit_enu_m.size(); ++i) {
      for (int k = 0; k < 3; ++k) {
        require_in_range("array positions[" + std::to_string(i) + "][" + std::to_string(k) + "]",
                         explicit_enu_m[i][static_cast<std::size_t>(k)], -1e6, 1e6, "m");
      }
    }
    return;
  }
  if (antenna_count < 2 || antenna_count > 200) {
    throw InvalidInput("antenna_count = " + std::to_string(antenna_count) + " is outside [2, 200]");
  }
  require_in_range("min_spacing_m", min_spacing_m, 1.0, 1000.0, "m");
  require_in_range("radius_m", radius_m, 10.0, 1e5, "m");
  if (kind != LayoutKind::kCompact) {
    // Area needed for the count at the minimum spacing (hexagonal packing), with room to spare.
    const double needed = min_spacing_m * std::sqrt(static_cast<double>(antenna_count)) * 0.75;
    if (radius_m < needed) {
      throw InvalidInput(describe_value("radius_m", radius_m) + " is too small for " +
                         std::to_string(antenna_count) + " antennas " +
                         std::to_string(min_spacing_m) + " m apart");
    }
  }
}

std::vector<std::array<double, 3>> make_array_layout(const ArrayLayoutSpec& spec,
                                                     std::uint64_t seed) {
  spec.validate();
  if (spec.kind == LayoutKind::kExplicit) return spec.explicit_enu_m;
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const std::size_t n = static_cast<std::size_t>(spec.antenna_count);
  std::vector<std::array<double, 3>> out;
  out.reserve(n);
  const double s = spec.min_spacing_m;
  if (spec.kind == LayoutKind::kCompact) {
    // Hexagonal rings around the centre, spacing 1.05 s with small jitter (< 0.02 s), so the
    // shortest baselines stay above min_spacing_m.
    out.push_back({0.0, 0.0, 0.0});
    for (int ring = 1; out.size() < n; ++ring) {
      for (int side = 0; side < 6 && out.size() < n; ++side) {
        const double a0 = std::numbers::pi / 3.0 * side;
        const double a1 = std::numbers::pi / 3.0 * (side + 1);
        for (int k = 0; k < ring && out.size() < n; ++k) {
          const double f = static_cast<double>(k) / ring;
          const double e = ring * 1.05 * s * ((1 - f) * std::cos(a0) + f * std::cos(a1));
          const double no = ring * 1.05 * s * ((1 - f) * std::sin(a0) + f * std::sin(a1));
          out.push_back({e + 0.02 * s * (unit(rng) - 0.5), no + 0.02 * s * (unit(rng) - 0.5), 0.0});
        }
      }
    }
    return out;
  }
  auto far_enough = [&](double e, double no) {
    for (const auto& p : out) {
      if (std::hypot(p[0] - e, p[1] - no) < s) return false;
    }
    return true;
  };
  if (spec.kind == LayoutKind::kExtended) {
    // Three arms 120 deg apart, radii growing geometrically from 2 s to radius_m on every arm,
    // each antenna rotated a little further (a shallow spiral) for better baseline coverage.
    out.push_back({0.0, 0.0, 0.0});
    const std::size_t outer = n - 1;
    for (std::size_t arm = 0; arm < 3; ++arm) {
      const std::size_t count = outer / 3 + (arm < outer % 3 ? 1 : 0);
      for (std::size_t step = 0; step < count; ++step) {
        const double fraction =
            count > 1 ? static_cast<double>(step) / static_cast<double>(count - 1) : 1.0;
        const double r = 2.0 * s * std::pow(spec.radius_m / (2.0 * s), fraction);
        const double angle = 2.0 * std::numbers::pi * static_cast<double>(arm) / 3.0 +
                             0.08 * static_cast<double>(step);
        double e = r * std::cos(angle), no = r * std::sin(angle);
        for (int tries = 0; !far_enough(e, no) && tries < 1000; ++tries) {
          e += s * (unit(rng) - 0.5);
          no += s * (unit(rng) - 0.5);
        }
        out.push_back({e, no, 0.0});
      }
    }
    return out;
  }
  // Random inside the radius with rejection of close pairs.
  for (int attempts = 0; out.size() < n; ++attempts) {
    if (attempts > 1000000) {
      throw InvalidInput(describe_value("radius_m", spec.radius_m) + " cannot fit " +
                         std::to_string(n) + " antennas " + std::to_string(s) + " m apart");
    }
    const double r = spec.radius_m * std::sqrt(unit(rng));
    const double angle = 2.0 * std::numbers::pi * unit(rng);
    const double e = r * std::cos(angle), no = r * std::sin(angle);
    if (far_enough(e, no)) out.push_back({e, no, 0.0});
  }
  return out;
}

LayoutKind layout_kind_from_string(const std::string& name) {
  if (name == "compact") return LayoutKind::kCompact;
  if (name == "extended") return LayoutKind::kExtended;
  if (name == "random") return LayoutKind::kRandom;
  if (name == "explicit") return LayoutKind::kExplicit;
  throw InvalidInput("array layout = '" + name +
                     "' is not one of compact, extended, random, explicit");
}

std::string to_string(LayoutKind kind) {
  switch (kind) {
    case LayoutKind::kCompact:
      return "compact";
    case LayoutKind::kExtended:
      return "extended";
    case LayoutKind::kRandom:
      return "random";
    case LayoutKind::kExplicit:
      return "explicit";
  }
  return "unknown";
}

}  // namespace wvr
