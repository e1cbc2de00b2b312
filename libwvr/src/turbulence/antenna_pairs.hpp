#pragma once
// The antenna pairs a pair-based statistic visits (the radiometer structure function, the
// wind's lag search). Their cost grows as antennas^2 x samples; beyond `max_pairs` pairs an
// even subsample over baseline length keeps the stage linear in antennas x samples while every
// length range stays represented.

#include <array>
#include <cstddef>
#include <vector>

#include "wvr/night.hpp"

namespace wvr::detail {

// Every pair (a < b) of the night's antennas when there are at most max_pairs; otherwise
// max_pairs of them: all pairs ordered by horizontal separation (then a, then b) and taken at
// evenly spaced ranks, the shortest and the longest included. Returned in (a, b) order.
// max_pairs must be at least 2.
std::vector<std::array<std::size_t, 2>> antenna_pairs(const Night& night, std::size_t max_pairs);

}  // namespace wvr::detail
