#include "turbulence/antenna_pairs.hpp"

#include <algorithm>
#include <cmath>
#include <tuple>

namespace wvr::detail {

std::vector<std::array<std::size_t, 2>> antenna_pairs(const Night& night, std::size_t max_pairs) {
  const std::size_t na = night.antenna_count();
  std::vector<std::array<std::size_t, 2>> pairs;
  for (std::size_t a = 0; a < na; ++a)
    for (std::size_t b = a + 1; b < na; ++b) pairs.push_back({a, b});
  if (pairs.size() <= max_pairs) return pairs;
  const auto length_m = [&](const std::array<std::size_t, 2>& p) {
    const auto& pa = night.array.position_enu_m[p[0]];
    const auto& pb = night.array.position_enu_m[p[1]];
    return std::hypot(pb[0] - pa[0], pb[1] - pa[1]);
  };
  std::vector<std::tuple<double, std::size_t, std::size_t>> by_length;
  by_length.reserve(pairs.size());
  for (const auto& p : pairs) by_length.emplace_back(length_m(p), p[0], p[1]);
  std::sort(by_length.begin(), by_length.end());
  std::vector<std::array<std::size_t, 2>> chosen;
  chosen.reserve(max_pairs);
  const std::size_t last = by_length.size() - 1;
  for (std::size_t i = 0; i < max_pairs; ++i) {
    const auto& [length, a, b] = by_length[i * last / (max_pairs - 1)];
    chosen.push_back({a, b});
  }
  std::sort(chosen.begin(), chosen.end());
  return chosen;
}

}  // namespace wvr::detail
