// Configuration files are strict: a key no reader asked for is an error naming the file, line
// and key with the nearest known key suggested, integers are range-checked, and a file that is
// not a regular file of sensible size is refused before it is read.
#include <gtest/gtest.h>

#include <filesystem>
#include <string>

#include "core/config_text.hpp"
#include "test_util.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/error.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/scenario.hpp"
#include "wvr/site_config.hpp"

namespace wvr {
namespace {

template <typename Parse>
std::string error_of(Parse parse) {
  try {
    parse();
  } catch (const InvalidInput& error) {
    return error.what();
  }
  return "no error";
}

const char* const kChannel =
    "[[channels]]\nname = \"c1\"\nif_centre_ghz = 1.0\nbandwidth_ghz = 0.5\n";

TEST(StrictConfig, AMisspeltSiteKeyIsAnErrorWithTheLineAndTheNearestKey) {
  // Before: `altitude = 4850` was ignored and the site sat at the default altitude.
  const std::string message = error_of(
      [] { parse_site_config("name = \"x\"\naltitude = 4850.0\npwv_mm = 1.0\n", "site.toml"); });
  EXPECT_NE(message.find("site.toml:2: unknown key 'altitude' (did you mean 'altitude_m'?)"),
            std::string::npos)
      << message;
  const std::string inversion = error_of([] {
    parse_site_config("pwv_mm = 1.0\n[inversion]\ndepth_m = 100.0\njump_k = 3.0\n", "site.toml");
  });
  EXPECT_NE(inversion.find("site.toml:4: unknown key 'inversion.jump_k'"), std::string::npos)
      << inversion;
}

TEST(StrictConfig, AKeyFarFromEveryKnownOneListsTheKnownKeys) {
  const std::string message =
      error_of([] { parse_site_config("pwv_mm = 1.0\ncolour = \"blue\"\n", "site.toml"); });
  EXPECT_NE(message.find("unknown key 'colour' (known:"), std::string::npos) << message;
  EXPECT_NE(message.find("altitude_m"), std::string::npos) << message;
}

TEST(StrictConfig, RadiometerKeysAndIntegersAreChecked) {
  const std::string top = error_of([] {
    parse_radiometer_config(std::string("lo_freq_ghz = 183.31\nlo_frequency = 2\n") + kChannel,
                            "rad.toml");
  });
  EXPECT_NE(top.find("rad.toml:2: unknown key 'lo_frequency'"), std::string::npos) << top;
  const std::string channel = error_of([] {
    parse_radiometer_config(std::string("lo_freq_ghz = 183.31\n") + kChannel + "noise = 0.1\n",
                            "rad.toml");
  });
  EXPECT_NE(channel.find("rad.toml:6: unknown key 'channels[0].noise' (did you mean "
                         "'channels[0].noise_k'?)"),
            std::string::npos)
      << channel;
  // 2^32 + 6 once wrapped to 6 through a 32-bit cast.
  const std::string huge = error_of([] {
    parse_radiometer_config(
        std::string("lo_freq_ghz = 183.31\nquadrature_points_per_sideband = 4294967302\n") +
            kChannel,
        "rad.toml");
  });
  EXPECT_NE(huge.find("rad.toml: quadrature_points_per_sideband = 4294967302 is outside [1, 64]"),
            std::string::npos)
      << huge;
}

TEST(StrictConfig, ChannelNamesMustBeUniqueAndNonEmpty) {
  const std::string duplicate = error_of([] {
    parse_radiometer_config(std::string("lo_freq_ghz = 183.31\n") + kChannel +
                                "[[channels]]\nname = \"c1\"\nif_centre_ghz = 3.0\n"
                                "bandwidth_ghz = 0.5\n",
                            "rad.toml");
  });
  EXPECT_NE(duplicate.find("channels[1].name = 'c1' repeats channels[0].name"), std::string::npos)
      << duplicate;
  const std::string empty = error_of([] {
    parse_radiometer_config(
        "lo_freq_ghz = 183.31\n[[channels]]\nname = \"\"\nif_centre_ghz = 1.0\n"
        "bandwidth_ghz = 0.5\n",
        "rad.toml");
  });
  EXPECT_NE(empty.find("channels[0].name is empty"), std::string::npos) << empty;
}

TEST(StrictConfig, TheShippedFilesStillRead) {
  EXPECT_NO_THROW(load_site_config(test::testdata("sites/demo-site.toml")));
  EXPECT_NO_THROW(load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml")));
  EXPECT_NO_THROW(load_radiometer_config(test::testdata("radiometers/demo-22-ssb.toml")));
  EXPECT_NO_THROW(load_diagnosis_thresholds(test::testdata("diagnosis-thresholds.toml")));
  EXPECT_NO_THROW(load_scenario(test::testdata("demo-scenario.toml")));
  for (const auto& entry : std::filesystem::directory_iterator(test::testdata("scenarios")))
    EXPECT_NO_THROW(load_scenario(entry.path())) << entry.path();
}

TEST(StrictConfig, OnlyRegularFilesOfConfigurationSizeAreRead) {
  // Before: `--site /dev/zero` read until memory ran out (std::bad_alloc).
  const std::string device = error_of([] { load_site_config("/dev/zero"); });
  EXPECT_NE(device.find("site file /dev/zero is not a regular file"), std::string::npos) << device;
  const std::string missing = error_of([] { load_site_config("/nonexistent/site.toml"); });
  EXPECT_NE(missing.find("site file /nonexistent/site.toml cannot be opened"), std::string::npos)
      << missing;
}

std::string scenario_error(const std::string& extra) {
  return error_of([&] {
    parse_scenario(
        "site_file = \"sites/demo-site.toml\"\nradiometer_file = "
        "\"radiometers/demo-183-dsb.toml\"\n" +
            extra,
        "night.toml", test::testdata(""));
  });
}

TEST(StrictConfig, ScenarioKeysAreCheckedInEveryTable) {
  EXPECT_EQ(scenario_error(""), "no error");
  EXPECT_NE(scenario_error("duration = 600.0\n")
                .find("night.toml:3: unknown key 'duration' (did "
                      "you mean 'duration_s'?)"),
            std::string::npos);
  EXPECT_NE(scenario_error("[array]\nantena_count = 8\n")
                .find("night.toml:4: unknown key 'array.antena_count' (did you mean "
                      "'array.antenna_count'?)"),
            std::string::npos);
  EXPECT_NE(scenario_error("[true_sky.calibration]\noffset_k = 1.0\n")
                .find("unknown key 'true_sky.calibration.offset_k'"),
            std::string::npos);
  EXPECT_NE(scenario_error("[[turbulence]]\npath_rms_um = 100.0\nspeed = 3.0\n")
                .find("night.toml:5: unknown key 'turbulence[0].speed'"),
            std::string::npos);
  EXPECT_NE(scenario_error("[[faults]]\nantenna = 1\nkind = \"spike\"\nstart_s = 0.0\n"
                           "stop_s = 10.0\nmagnitud = 3.0\n")
                .find("unknown key 'faults[0].magnitud' (did you mean 'faults[0].magnitude'?)"),
            std::string::npos);
}

TEST(StrictConfig, ScenarioIntegersDoNotWrap) {
  // 2^32 + 6 once became 6 antennas through a 32-bit cast.
  const std::string wrapped = scenario_error("[array]\nantenna_count = 4294967302\n");
  EXPECT_NE(wrapped.find("night.toml: array.antenna_count = 4294967302 is outside"),
            std::string::npos)
      << wrapped;
  EXPECT_NE(scenario_error("seed = -1\n").find("night.toml: seed = -1 is outside"),
            std::string::npos);
  EXPECT_NE(scenario_error("[array]\nantenna_count = 1.5\n")
                .find("array.antenna_count is not an integer"),
            std::string::npos);
}

TEST(StrictConfig, NearestKeySuggestsOnlyLikelySlips) {
  const std::vector<std::string> known = {"altitude_m", "latitude_deg", "pwv_mm"};
  EXPECT_EQ(detail::nearest_key("altitude", known), "altitude_m");
  EXPECT_EQ(detail::nearest_key("latitud_deg", known), "latitude_deg");
  EXPECT_EQ(detail::nearest_key("surface_colour_name", known), std::nullopt);
}

}  // namespace
}  // namespace wvr
