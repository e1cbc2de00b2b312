#pragma once
// The (ln separation, ln D) points of a structure function, as its log-log fits use them.

#include <cmath>
#include <span>
#include <string>
#include <vector>

#include "wvr/error.hpp"

namespace wvr::detail {

struct LogPoints {
  std::vector<double> log_d, log_v;
};

// Points with a positive, finite separation and value; throws InvalidInput when the two
// spans differ in length.
inline LogPoints log_points(std::span<const double> separation_m,
                            std::span<const double> structure_m2) {
  if (separation_m.size() != structure_m2.size()) {
    throw InvalidInput("separation_m has " + std::to_string(separation_m.size()) +
                       " values but structure_m2 has " + std::to_string(structure_m2.size()));
  }
  LogPoints p;
  for (std::size_t i = 0; i < separation_m.size(); ++i) {
    if (separation_m[i] > 0.0 && std::isfinite(separation_m[i]) && structure_m2[i] > 0.0 &&
        std::isfinite(structure_m2[i])) {
      p.log_d.push_back(std::log(separation_m[i]));
      p.log_v.push_back(std::log(structure_m2[i]));
    }
  }
  return p;
}

}  // namespace wvr::detail
