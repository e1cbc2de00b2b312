// The brightness convention of night files: conversion of Planck-labelled files on read, and
// the residual-pattern check that flags a night filled in the other convention.
#include "wvr/brightness_convention.hpp"

#include <gtest/gtest.h>
#include <hdf5.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <filesystem>

#include "test_util.hpp"
#include "wvr/brightness_convention_check.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/planck.hpp"
#include "wvr/simulator.hpp"

namespace wvr {
namespace {

const std::string kNight = R"(
name = "convention test night"
seed = 9
duration_s = 600.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "compact"
antenna_count = 6
radius_m = 300.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -30.0
start_hour_angle_h = -0.5
[[turbulence]]
kind = "wet"
height_m = 500.0
thickness_m = 500.0
outer_scale_m = 4000.0
wind_east_m_s = 8.0
wind_north_m_s = 0.0
path_rms_um = 200.0
)";

Night simulated() {
  return simulate_night(parse_scenario(kNight, "convention.toml", test::testdata("")));
}

std::filesystem::path temp_file(const std::string& name) {
  return std::filesystem::temp_directory_path() /
         ("wvr_convention_" + std::to_string(::getpid()) + "_" + name + ".h5");
}

void set_convention_attribute(const std::filesystem::path& path, const std::string& value) {
  const hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT);
  ASSERT_GE(file, 0);
  H5Adelete_by_name(file, "/radiometer", "brightness_convention", H5P_DEFAULT);
  const hid_t type = H5Tcopy(H5T_C_S1);
  H5Tset_size(type, value.size());
  const hid_t space = H5Screate(H5S_SCALAR);
  const hid_t attribute = H5Acreate_by_name(file, "/radiometer", "brightness_convention", type,
                                            space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
  H5Awrite(attribute, type, value.c_str());
  H5Aclose(attribute);
  H5Sclose(space);
  H5Tclose(type);
  H5Fclose(file);
}

TEST(BrightnessConvention, ConversionRoundTripsAndShiftsByHalfThePhotonTemperature) {
  const RadiometerConfig radiometer =
      load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml"));
  std::vector<double> tb = {250.0, 150.0, 60.0, 20.0, std::nan(""), 0.0, 100.0, 30.0};
  tb.resize(2 * radiometer.channels.size(), 80.0);
  std::vector<double> planck = tb;
  rj_equivalent_to_planck(radiometer, planck);
  std::vector<double> back = planck;
  planck_to_rj_equivalent(radiometer, back);
  for (std::size_t i = 0; i < tb.size(); ++i) {
    if (std::isnan(tb[i])) {
      EXPECT_TRUE(std::isnan(back[i]));
      continue;
    }
    EXPECT_NEAR(back[i], tb[i], 1e-9);
    if (tb[i] <= 0.0) continue;
    // Planck - RJ = h nu / 2k - (h nu / k)^2 / (12 T) + ... (series of J(nu, T) in 1/T).
    const std::size_t c = i % radiometer.channels.size();
    const double x =
        planck_temperature_scale_k(convention_frequency_ghz(radiometer.channels[c], 183.31));
    EXPECT_NEAR(planck[i] - tb[i], x / 2.0, x * x / (6.0 * planck[i])) << i;
  }
  EXPECT_EQ(to_string(brightness_convention_from_string("planck", "f")), "planck");
  EXPECT_THROW(brightness_convention_from_string("brightness", "f"), InvalidInput);
}

TEST(BrightnessConvention, PlanckLabelledFilesAreConvertedOnRead) {
  const Night night = simulated();
  const std::filesystem::path path = temp_file("planck");
  NightWriteOptions options;
  options.overwrite_output = true;
  Night planck = night;
  rj_equivalent_to_planck(planck.radiometer.config, planck.radiometer.brightness_k);
  write_night(planck, path, options);
  set_convention_attribute(path, "planck");
  const Night back = read_night(path);
  ASSERT_EQ(back.radiometer.brightness_k.size(), night.radiometer.brightness_k.size());
  for (std::size_t i = 0; i < night.radiometer.brightness_k.size(); i += 7)
    ASSERT_NEAR(back.radiometer.brightness_k[i], night.radiometer.brightness_k[i], 1e-9) << i;
  // Without the conversion the values would be ~4.4 K higher.
  EXPECT_GT(planck.radiometer.brightness_k[0] - night.radiometer.brightness_k[0], 4.0);
  // A written night says what it holds; an unknown label is refused by name.
  write_night(night, path, options);
  const Night plain = read_night(path);
  EXPECT_EQ(plain.radiometer.brightness_k, night.radiometer.brightness_k);
  set_convention_attribute(path, "kelvin");
  try {
    read_night(path);
    ADD_FAILURE() << "no error";
  } catch (const InvalidInput& e) {
    EXPECT_NE(std::string(e.what()).find("brightness_convention = \"kelvin\""), std::string::npos)
        << e.what();
  }
  std::filesystem::remove(path);
}

TEST(BrightnessConvention, ResidualPatternFlagsTheOtherConvention) {
  const Night night = simulated();
  const SiteParameters site = night.site->site.parameters;
  const NightRetrieval right = retrieve_night(night, site);
  const BrightnessConventionCheck ok = check_brightness_convention(night, right);
  EXPECT_FALSE(ok.looks_like_other_convention) << ok.amplitude << " " << ok.explained_fraction;
  EXPECT_TRUE(ok.message.empty());

  // Planck brightness temperatures in a file labelled Rayleigh-Jeans-equivalent.
  Night mislabelled = night;
  rj_equivalent_to_planck(mislabelled.radiometer.config, mislabelled.radiometer.brightness_k);
  const NightRetrieval wrong = retrieve_night(mislabelled, site);
  const BrightnessConventionCheck flagged = check_brightness_convention(mislabelled, wrong);
  EXPECT_TRUE(flagged.looks_like_other_convention);
  EXPECT_NEAR(flagged.amplitude, 1.0, 0.3);
  EXPECT_NE(flagged.message.find("Planck brightness temperatures read as"), std::string::npos);
  const NightRetrievalSummary a = summarize(right), b = summarize(wrong);
  std::printf(
      "Planck read as RJ: PWV %.4f -> %.4f mm (%+.1f %%), chi2/dof %.2f -> %.1f; "
      "pattern amplitude %.3f explains %.0f %%\n",
      a.pwv_median_mm, b.pwv_median_mm, 100.0 * (b.pwv_median_mm / a.pwv_median_mm - 1.0),
      a.chi2_per_dof_median, b.chi2_per_dof_median, flagged.amplitude,
      100.0 * flagged.explained_fraction);
  EXPECT_GT(b.chi2_per_dof_median, 20.0 * a.chi2_per_dof_median);

  // Rayleigh-Jeans-equivalent brightness converted as if it were Planck.
  Night reversed = night;
  planck_to_rj_equivalent(reversed.radiometer.config, reversed.radiometer.brightness_k);
  const BrightnessConventionCheck flipped =
      check_brightness_convention(reversed, retrieve_night(reversed, site));
  EXPECT_TRUE(flipped.looks_like_other_convention);
  EXPECT_NEAR(flipped.amplitude, -1.0, 0.3);
}

TEST(BrightnessConvention, MismatchedSkyIsNotMistakenForAConventionError) {
  // Another absorption model, lapse rate, inversion and calibration errors of 1.5 K / 3 %:
  // residuals that are not the convention pattern.
  Scenario s = load_scenario(test::testdata("scenarios/mismatched-small.toml"));
  s.duration_s = 600.0;
  const Night night = simulate_night(s);
  const BrightnessConventionCheck check =
      check_brightness_convention(night, retrieve_night(night, night.site->site.parameters));
  EXPECT_FALSE(check.looks_like_other_convention)
      << check.amplitude << " " << check.explained_fraction << " " << check.message;
  std::printf("mismatched night: pattern amplitude %.3f explains %.0f %%\n", check.amplitude,
              100.0 * check.explained_fraction);
}

}  // namespace
}  // namespace wvr
