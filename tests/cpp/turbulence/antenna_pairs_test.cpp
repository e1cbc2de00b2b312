// The pairs a pair-based statistic visits: all of them up to max_pairs, an even subsample over
// baseline length beyond.
#include "turbulence/antenna_pairs.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <set>

#include "wvr/error.hpp"
#include "wvr/spatial_structure.hpp"
#include "wvr/wind.hpp"

namespace wvr {
namespace {

// Eight antennas on a line at 0, 10, 30, 60, ... m (every separation distinct), with paths
// that differ per antenna so that every pair has its own structure.
Night line_night(AntennaPaths& paths) {
  Night night;
  const std::size_t na = 8, nt = 600;
  for (std::size_t a = 0; a < na; ++a) {
    night.array.antenna_names.push_back("L" + std::to_string(a));
    night.array.position_enu_m.push_back({5.0 * static_cast<double>(a * (a + 1)), 0.0, 0.0});
  }
  paths.antennas = na;
  for (std::size_t k = 0; k < nt; ++k) paths.time_s.push_back(static_cast<double>(k));
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t k = 0; k < nt; ++k) {
      const double t = static_cast<double>(k);
      paths.path_mm.push_back(std::sin(0.01 * t * static_cast<double>(a + 1)) +
                              0.1 * std::cos(0.37 * t + static_cast<double>(a)));
    }
  }
  return night;
}

double separation_m(const Night& night, const std::array<std::size_t, 2>& p) {
  return std::abs(night.array.position_enu_m[p[1]][0] - night.array.position_enu_m[p[0]][0]);
}

TEST(AntennaPairs, AllUpToTheLimitThenAnEvenSubsampleOverLength) {
  AntennaPaths paths;
  const Night night = line_night(paths);
  const auto all = detail::antenna_pairs(night, 28);
  ASSERT_EQ(all.size(), 28u);
  EXPECT_EQ(all.front(), (std::array<std::size_t, 2>{0, 1}));
  EXPECT_EQ(all.back(), (std::array<std::size_t, 2>{6, 7}));
  const auto some = detail::antenna_pairs(night, 6);
  ASSERT_EQ(some.size(), 6u);
  EXPECT_TRUE(std::is_sorted(some.begin(), some.end()));
  EXPECT_EQ(std::set(some.begin(), some.end()).size(), 6u);
  // The shortest (0-1, 10 m) and the longest (0-7, 280 m) separations are kept, and the ranks
  // in between are evenly spaced: ranks 0, 5, 10, 16, 21, 27 of the 28 sorted separations.
  std::vector<double> all_lengths, kept_lengths;
  for (const auto& p : all) all_lengths.push_back(separation_m(night, p));
  for (const auto& p : some) kept_lengths.push_back(separation_m(night, p));
  std::sort(all_lengths.begin(), all_lengths.end());
  std::sort(kept_lengths.begin(), kept_lengths.end());
  const std::vector<double> expected = {all_lengths[0],  all_lengths[5],  all_lengths[10],
                                        all_lengths[16], all_lengths[21], all_lengths[27]};
  EXPECT_EQ(kept_lengths, expected);
}

TEST(AntennaPairs, StructureFunctionAndWindVisitOnlyTheChosenPairs) {
  AntennaPaths paths;
  const Night night = line_night(paths);
  SpatialStructureOptions options;
  const SpatialStructureResult full = radiometer_structure_function(night, paths, options);
  ASSERT_EQ(full.baselines.size(), 28u);
  options.max_pairs = 6;
  const SpatialStructureResult subsampled = radiometer_structure_function(night, paths, options);
  ASSERT_EQ(subsampled.baselines.size(), 6u);
  const auto chosen = detail::antenna_pairs(night, 6);
  for (const BaselineStructure& b : subsampled.baselines) {
    const std::array<std::size_t, 2> pair = {static_cast<std::size_t>(b.antenna_a),
                                             static_cast<std::size_t>(b.antenna_b)};
    EXPECT_NE(std::find(chosen.begin(), chosen.end(), pair), chosen.end());
    // The same value as in the full computation.
    const auto same = std::find_if(full.baselines.begin(), full.baselines.end(), [&](auto& f) {
      return f.antenna_a == b.antenna_a && f.antenna_b == b.antenna_b;
    });
    ASSERT_NE(same, full.baselines.end());
    EXPECT_EQ(same->structure_m2, b.structure_m2);
  }
  WindOptions wind_options;
  wind_options.max_pairs = 6;
  const WindEstimate wind = estimate_wind(night, paths, wind_options);
  ASSERT_EQ(wind.pairs.size(), 6u);
  for (std::size_t i = 0; i < 6; ++i) {
    EXPECT_EQ(static_cast<std::size_t>(wind.pairs[i].antenna_a), chosen[i][0]);
    EXPECT_EQ(static_cast<std::size_t>(wind.pairs[i].antenna_b), chosen[i][1]);
  }
  // Fewer than two pairs is no subsample.
  options.max_pairs = 1;
  EXPECT_THROW(radiometer_structure_function(night, paths, options), InvalidInput);
  wind_options.max_pairs = 1;
  EXPECT_THROW(estimate_wind(night, paths, wind_options), InvalidInput);
}

}  // namespace
}  // namespace wvr
