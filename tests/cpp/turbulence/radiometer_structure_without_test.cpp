// The radiometer structure function with spans of samples left out (the slab jackknife's
// refits) against the direct computation on paths whose left-out samples are NaN.
#include "turbulence/radiometer_structure_without.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "wvr/error.hpp"
#include "wvr/spatial_structure.hpp"

namespace wvr {
namespace {

// Antennas on a line, `samples` seconds of random-walk paths (with an offset of a metre,
// so that shifted sums matter) and a few NaN samples.
struct PathNight {
  Night night;
  AntennaPaths paths;
};

PathNight random_walk_night(std::size_t antennas, std::size_t samples) {
  PathNight out;
  for (std::size_t a = 0; a < antennas; ++a) {
    out.night.array.antenna_names.push_back("A" + std::to_string(a));
    out.night.array.position_enu_m.push_back({40.0 * static_cast<double>(a * a), 0.0, 0.0});
  }
  out.paths.antennas = antennas;
  for (std::size_t k = 0; k < samples; ++k) out.paths.time_s.push_back(static_cast<double>(k));
  std::mt19937_64 random(20261204);
  std::normal_distribution<double> step(0.0, 0.01);
  out.paths.path_mm.resize(antennas * samples);
  for (std::size_t a = 0; a < antennas; ++a) {
    double path_mm = 1000.0;
    for (std::size_t k = 0; k < samples; ++k) {
      path_mm += step(random);
      out.paths.path_mm[a * samples + k] = path_mm;
    }
  }
  for (std::size_t k : {3u, 400u, 401u, 777u})
    if (k < samples) out.paths.path_mm[2 * samples + k] = std::nan("");
  return out;
}

void expect_same(const SpatialStructureResult& got, const SpatialStructureResult& want) {
  ASSERT_EQ(got.status, want.status);
  ASSERT_EQ(got.baselines.size(), want.baselines.size());
  EXPECT_EQ(got.samples_skipped, want.samples_skipped);
  for (std::size_t i = 0; i < want.baselines.size(); ++i) {
    const BaselineStructure& g = got.baselines[i];
    const BaselineStructure& w = want.baselines[i];
    EXPECT_EQ(g.antenna_a, w.antenna_a);
    EXPECT_EQ(g.antenna_b, w.antenna_b);
    EXPECT_EQ(g.samples, w.samples);
    EXPECT_EQ(g.segments, w.segments);
    EXPECT_EQ(g.noise_m2, w.noise_m2);
    EXPECT_NEAR(g.structure_m2, w.structure_m2, 1e-11 * w.structure_m2) << "baseline " << i;
  }
}

TEST(RadiometerStructureWithout, EqualsTheDirectSumOverBlankedSamples) {
  const PathNight n = random_walk_night(5, 1200);
  SpatialStructureOptions options;
  options.window_s = 300.0;  // four windows, cut by the spans below
  options.antenna_path_noise_mm = {0.01, 0.02, std::nan(""), 0.0, 0.01};
  // Nothing left out; a span inside one window; one across a window edge; one that leaves a
  // window with fewer than min_samples (295 of 300 out); the whole night.
  const std::vector<detail::SampleSpan> spans = {
      {0, 0}, {100, 250}, {280, 610}, {900, 1195}, {0, 1200}};
  for (int threads : {1, 3}) {
    options.threads = threads;
    const std::vector<SpatialStructureResult> without =
        detail::radiometer_structure_without(n.night, n.paths, options, spans);
    ASSERT_EQ(without.size(), spans.size());
    for (std::size_t j = 0; j < spans.size(); ++j) {
      SCOPED_TRACE("span " + std::to_string(j) + ", threads " + std::to_string(threads));
      AntennaPaths blanked = n.paths;
      for (std::size_t a = 0; a < blanked.antennas; ++a) {
        for (std::size_t k = spans[j].first; k < spans[j].last; ++k)
          blanked.path_mm[a * blanked.time_s.size() + k] = std::nan("");
      }
      expect_same(without[j], radiometer_structure_function(n.night, blanked, options));
    }
  }
  // Without windows, too.
  options.window_s = 0.0;
  const std::vector<SpatialStructureResult> whole =
      detail::radiometer_structure_without(n.night, n.paths, options, spans);
  AntennaPaths blanked = n.paths;
  for (std::size_t a = 0; a < blanked.antennas; ++a) {
    for (std::size_t k = 280; k < 610; ++k) blanked.path_mm[a * 1200 + k] = std::nan("");
  }
  expect_same(whole[2], radiometer_structure_function(n.night, blanked, options));
  EXPECT_EQ(whole[4].status, DiagnosticStatus::kNoData);
}

TEST(RadiometerStructureWithout, SpanOutsideTheSamplesThrows) {
  const PathNight n = random_walk_night(3, 100);
  const std::vector<detail::SampleSpan> past_the_end = {{50, 101}};
  EXPECT_THROW(detail::radiometer_structure_without(n.night, n.paths, {}, past_the_end),
               InvalidInput);
  const std::vector<detail::SampleSpan> reversed = {{60, 50}};
  EXPECT_THROW(detail::radiometer_structure_without(n.night, n.paths, {}, reversed), InvalidInput);
}

}  // namespace
}  // namespace wvr
