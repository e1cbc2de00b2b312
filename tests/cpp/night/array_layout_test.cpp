// Simulated array layouts and the source track.
#include "wvr/array_layout.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "wvr/error.hpp"
#include "wvr/source_track.hpp"

namespace wvr {
namespace {

void baseline_range(const std::vector<std::array<double, 3>>& p,
                    double& shortest,
                    double& longest) {
  shortest = 1e300;
  longest = 0.0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    for (std::size_t j = i + 1; j < p.size(); ++j) {
      const double d = std::hypot(p[i][0] - p[j][0], p[i][1] - p[j][1]);
      shortest = std::min(shortest, d);
      longest = std::max(longest, d);
    }
  }
}

TEST(ArrayLayout, GeneratorsHonourCountAndSpacing) {
  for (LayoutKind kind : {LayoutKind::kCompact, LayoutKind::kExtended, LayoutKind::kRandom}) {
    for (int n : {8, 40, 80}) {
      ArrayLayoutSpec spec;
      spec.kind = kind;
      spec.antenna_count = n;
      spec.min_spacing_m = 15.0;
      spec.radius_m = 3000.0;
      const auto p = make_array_layout(spec, 11);
      ASSERT_EQ(p.size(), static_cast<std::size_t>(n));
      double shortest, longest;
      baseline_range(p, shortest, longest);
      EXPECT_GE(shortest, 15.0 * 0.98) << to_string(kind) << " " << n;
      if (kind == LayoutKind::kExtended) {
        EXPECT_LT(shortest, 60.0);   // short baselines for the thick regime
        EXPECT_GT(longest, 4000.0);  // several km
      }
      EXPECT_EQ(make_array_layout(spec, 11), p);  // deterministic
    }
  }
}

TEST(ArrayLayout, RejectsBadSpecs) {
  ArrayLayoutSpec spec;
  spec.antenna_count = 1;
  EXPECT_THROW(spec.validate(), InvalidInput);
  spec.antenna_count = 80;
  spec.radius_m = 50.0;
  spec.kind = LayoutKind::kRandom;
  EXPECT_THROW(spec.validate(), InvalidInput);
  spec.kind = LayoutKind::kExplicit;
  spec.explicit_enu_m = {{0, 0, 0}, {std::nan(""), 0, 0}};
  EXPECT_THROW(spec.validate(), InvalidInput);
  EXPECT_THROW(layout_kind_from_string("spiral"), InvalidInput);
}

TEST(SourceTrack, TransitAndPole) {
  // A source at the observer's latitude transits at the zenith.
  EXPECT_NEAR(source_position(-24.0, {-24.0, 0.0}, 0.0).elevation_deg, 90.0, 1e-9);
  // At transit, a source north of the zenith (southern observer) is due north.
  const HorizonPosition p = source_position(-24.0, {10.0, 0.0}, 0.0);
  EXPECT_NEAR(p.elevation_deg, 90.0 - 34.0, 1e-9);
  EXPECT_NEAR(p.azimuth_deg, 0.0, 1e-9);
  // Rising (negative hour angle) in the east, setting in the west; the elevation after one
  // sidereal hour from H = -1 h equals that at transit.
  EXPECT_GT(source_position(-24.0, {-30.0, -2.0}, 0.0).azimuth_deg, 0.0);
  EXPECT_LT(source_position(-24.0, {-30.0, -2.0}, 0.0).azimuth_deg, 180.0);
  EXPECT_NEAR(source_position(-24.0, {-30.0, -1.0}, 3590.17).elevation_deg,
              source_position(-24.0, {-30.0, 0.0}, 0.0).elevation_deg, 1e-3);
}

}  // namespace
}  // namespace wvr
