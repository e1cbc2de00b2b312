// Sky dips as CSV: written and read back unchanged; malformed files refused naming the line and
// the column.
#include <gtest/gtest.h>

#include <sstream>

#include "test_util.hpp"
#include "wvr/error.hpp"
#include "wvr/site_config.hpp"
#include "wvr/sky_dip.hpp"

namespace wvr {
namespace {

TEST(SkyDipCsv, WrittenDipsReadBackUnchanged) {
  const RadiometerConfig radiometer =
      load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml"));
  const AtmosphereProfile profile =
      make_parametric_profile(load_site_config(test::testdata("sites/demo-site.toml")).parameters);
  SkyDipSimulationOptions sim;
  sim.elevation_deg = {90.0, 40.0, 25.0};
  const auto dips =
      simulate_sky_dips(profile, radiometer, {{"u1", {0.3}, {1.01}}, {"u2", {}, {}}}, sim);
  std::stringstream text;
  write_sky_dip_csv(text, dips, radiometer);
  const auto back = parse_sky_dip_csv(text, radiometer, "dips.csv");
  ASSERT_EQ(back.size(), 2u);
  for (std::size_t d = 0; d < 2; ++d) {
    EXPECT_EQ(back[d].antenna, dips[d].antenna);
    EXPECT_EQ(back[d].time_s, dips[d].time_s);
    EXPECT_EQ(back[d].elevation_deg, dips[d].elevation_deg);
    EXPECT_EQ(back[d].brightness_k, dips[d].brightness_k);
  }
}

TEST(SkyDipCsv, MalformedFilesNameLineAndColumn) {
  const RadiometerConfig radiometer =
      load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml"));
  auto error_of = [&](const std::string& text) {
    std::istringstream in(text);
    try {
      parse_sky_dip_csv(in, radiometer, "dips.csv");
    } catch (const InvalidInput& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_NE(error_of("time_s,antenna,elevation_deg,w1,w2,w3\n").find("no column 'w4'"),
            std::string::npos);
  EXPECT_NE(error_of("# dip\ntime_s,antenna,elevation_deg,w1,w2,w3,w4\n0,u1,90,1,2,x,4\n")
                .find("dips.csv line 3 w3 = 'x' is not a number"),
            std::string::npos);
  EXPECT_NE(error_of("time_s,antenna,elevation_deg,w1,w2,w3,w4\n0,u1,90,1,2,3\n")
                .find("dips.csv line 2 has 6 fields"),
            std::string::npos);
  EXPECT_NE(error_of("time_s,antenna,elevation_deg,w1,w2,w3,w4\n").find("no samples"),
            std::string::npos);
}

}  // namespace
}  // namespace wvr
