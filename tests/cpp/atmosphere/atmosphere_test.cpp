// Atmosphere profiles, standard atmospheres, humidity and refractivity against published
// values.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

TEST(StandardAtmosphere, Us1976TableValues) {
  // U.S. Standard Atmosphere 1976, Table I (geometric altitude), pressure in Pa; tolerance
  // 1e-4 relative (REFERENCES).
  const double pressure_pa[] = {101325, 89876, 79501, 70121, 61660, 54048, 47217};
  for (int km = 0; km <= 6; ++km) {
    EXPECT_NEAR(us_standard_atmosphere_1976(km * 1000.0).pressure_hpa * 100.0, pressure_pa[km],
                1e-4 * pressure_pa[km])
        << km << " km";
  }
  EXPECT_NEAR(us_standard_atmosphere_1976(1000.0).temperature_k, 281.651, 1e-3);
  EXPECT_NEAR(us_standard_atmosphere_1976(2000.0).temperature_k, 275.154, 1e-3);
  EXPECT_NEAR(us_standard_atmosphere_1976(4000.0).temperature_k, 262.166, 1e-3);
  // P.835-6 formula at 5 km (REFERENCES, computed): 255.676 K, 540.483 hPa.
  EXPECT_NEAR(us_standard_atmosphere_1976(5000.0).temperature_k, 255.676, 1e-3);
  EXPECT_NEAR(us_standard_atmosphere_1976(5000.0).pressure_hpa, 540.483, 1e-3);
  EXPECT_THROW(us_standard_atmosphere_1976(-10.0), InvalidInput);
}

TEST(StandardAtmosphere, MatchesItuRpyP835Table) {
  // ITU-Rpy commit 6d7f35c, P.835-6 mean annual global reference atmosphere.
  const test::CsvTable t =
      test::read_csv(test::testdata("reference/itur_p835_reference_atmosphere.csv"));
  ASSERT_GT(t.size(), 15u);
  for (std::size_t r = 0; r < t.size(); ++r) {
    const double h = t.number(r, "h_km") * 1000.0;
    const StandardAtmosphereLevel level = us_standard_atmosphere_1976(h);
    EXPECT_NEAR(level.temperature_k, t.number(r, "T_K"), 1e-6 * t.number(r, "T_K")) << h;
    EXPECT_NEAR(level.pressure_hpa, t.number(r, "P_hPa"), 1e-6 * t.number(r, "P_hPa")) << h;
    EXPECT_NEAR(p835_reference_vapour_density_kg_m3(h) * 1e3, t.number(r, "rho_gm3"),
                1e-9 * t.number(r, "rho_gm3") + 1e-12)
        << h;
    // P.453 refractivity with Pd = P - e: our hydrostatic + wet split sums to the same N.
    const double e = t.number(r, "e_hPa");
    const double pd = t.number(r, "P_hPa") - e;
    const double temp = t.number(r, "T_K");
    const RefractivityConstants k = RefractivityConstants::itu_p453();
    EXPECT_NEAR(hydrostatic_refractivity(pd, e, temp, k) + wet_refractivity(e, temp, k),
                t.number(r, "N_total_ppm"), 1e-6 * t.number(r, "N_total_ppm"))
        << h;
  }
}

TEST(StandardAtmosphere, TroposphereMatchesMetPyAfterItsBaseTemperature) {
  // MetPy (commit 79abf129) height_to_pressure_std and its inverse pressure_to_height_std:
  // p = p0 (1 - gamma z / t0)^(g / (Rd gamma)) with t0 = 288.0 K (the 1976 standard has
  // 288.15 K), gamma = 6.5 K/km, g = 9.80665, Rd = 8.314462618 / 0.02896546 (header of
  // metpy_standard_atmosphere.csv); its height is the geopotential one of the 1976 standard,
  // H = r0 z / (r0 + z). After the stated base-temperature difference the two agree to the
  // rounding of the exponent (MetPy g / (Rd gamma) = 5.25594 against the 1976 g0 M0 / (R*
  // gamma) = 5.25588: < 1e-4 of the pressure up to 11 km).
  const test::CsvTable t =
      test::read_csv(test::testdata("reference/metpy_standard_atmosphere.csv"));
  ASSERT_EQ(t.size(), 28u);
  const double gamma_k_per_m = 6.5e-3, r0_m = 6356766.0;
  const double exponent = 9.80665 / (8.314462618 / 0.02896546 * gamma_k_per_m);
  for (std::size_t r = 0; r < t.size(); ++r) {
    const double geopotential_m = t.number(r, "height_km") * 1000.0;
    const double metpy_hpa = t.number(r, "pressure_hPa");
    const double geometric_m = r0_m * geopotential_m / (r0_m - geopotential_m);
    const double ours_hpa = us_standard_atmosphere_1976(std::max(0.0, geometric_m)).pressure_hpa;
    // MetPy's pressure had its base been 288.15 K:
    const double base_correction = std::pow((1.0 - gamma_k_per_m * geopotential_m / 288.15) /
                                                (1.0 - gamma_k_per_m * geopotential_m / 288.0),
                                            exponent);
    EXPECT_NEAR(ours_hpa / (metpy_hpa * base_correction), 1.0, 1e-4)
        << t.text(r, "function") << " at " << geopotential_m << " m, " << metpy_hpa << " hPa";
  }
}

TEST(Sounding, VapourDensityOfEverySoundingFollowsItsDewpoint) {
  // Each sounding file carries the dew point as reported and the vapour density derived from
  // it with pyrtlib's Goff-Gratch (List 1963) saturation pressure over water (header of each
  // file). Ours goes through the P.453-13 saturation pressure over water (Buck form, EF = 1
  // at the dew point). The two formulas are fits to the same data and differ by a few
  // tenths of a percent (measured on these 5 files, dew points -40 to +24 degC: at most
  // +0.44 %); allowed 0.5 %, so using the ice form (5-10 % off at
  // -20 to -40 degC) or a wrong Kelvin offset (0.15 K = 1 %) fails.
  for (const char* name : {"may4", "jan20", "dec9", "may22", "nov11"}) {
    const std::string file = std::string("reference/soundings/") + name + "_sounding.csv";
    const test::CsvTable t = test::read_csv(test::testdata(file));
    ASSERT_GE(t.size(), 30u) << file;
    for (std::size_t r = 0; r < t.size(); ++r) {
      const double td_k = t.number(r, "dewpoint_c") + 273.15;
      if (td_k < 233.15) continue;  // below -40 degC both formulas are extrapolated
      const double ours = vapour_density_kg_m3(vapour_pressure_from_dewpoint_hpa(td_k),
                                               t.number(r, "temperature_c") + 273.15) *
                          1e3;
      EXPECT_NEAR(ours / t.number(r, "vapour_density_g_m3"), 1.0, 5e-3) << file << " row " << r;
    }
    // And the file reads as a sounding (its own density column) into a valid profile.
    const AtmosphereProfile profile =
        profile_from_sounding(read_sounding_csv(test::testdata(file)));
    EXPECT_GT(profile.pwv_mm(), 1.0) << file;
  }
}

TEST(Humidity, SaturationPressureMatchesItuRpyP453) {
  // ITU-Rpy commit 6d7f35c, itu453.saturation_vapour_pressure (P.453-13 eqs. 9-10).
  const test::CsvTable t =
      test::read_csv(test::testdata("reference/itur_p453_saturation_vapour_pressure.csv"));
  for (std::size_t r = 0; r < t.size(); ++r) {
    const double tk = t.number(r, "T_C") + 273.15;
    const double p = t.number(r, "P_hPa");
    EXPECT_NEAR(saturation_vapour_pressure_hpa(tk, p), t.number(r, "es_water_hPa"),
                1e-9 * t.number(r, "es_water_hPa"));
    const double ice = t.number(r, "es_ice_hPa");
    if (!std::isnan(ice)) {
      EXPECT_NEAR(saturation_vapour_pressure_hpa(tk, p, SaturationPhase::kIce), ice, 1e-9 * ice);
    }
  }
}

TEST(Humidity, SaturationPressurePublishedValues) {
  // REFERENCES, computed from P.453 with EF = 1.
  EXPECT_NEAR(saturation_vapour_pressure_hpa(273.15), 6.1121, 1e-4);
  EXPECT_NEAR(saturation_vapour_pressure_hpa(283.15), 12.2786, 1e-4);
  EXPECT_NEAR(saturation_vapour_pressure_hpa(293.15), 23.3834, 1e-4);
  EXPECT_NEAR(saturation_vapour_pressure_hpa(303.15), 42.4513, 1e-4);
  // IAPWS-IF97 Table 35: ps(300 K) = 3.53658941e-3 MPa; the Buck form is within 0.2 %.
  EXPECT_NEAR(saturation_vapour_pressure_hpa(300.0) / 35.3658941, 1.0, 0.002);
  // MetPy (commit 79abf129) uses Bolton (1980); the two forms agree within 0.3 % above -30 C.
  const test::CsvTable t =
      test::read_csv(test::testdata("reference/metpy_saturation_vapor_pressure.csv"));
  for (std::size_t r = 0; r < t.size(); ++r) {
    if (t.number(r, "T_C") < -30.0) continue;
    EXPECT_NEAR(saturation_vapour_pressure_hpa(t.number(r, "T_K")) / t.number(r, "es_hPa"), 1.0,
                0.003)
        << t.number(r, "T_C");
  }
  // rho_v = 216.7 e / T g/m^3 (P.453).
  EXPECT_NEAR(vapour_density_kg_m3(9.973, 288.15) * 1e3, 216.7 * 9.973 / 288.15, 1e-3);
}

TEST(CloudLiquid, MatchesItuRpyP840) {
  // ITU-Rpy commit 6d7f35c, itu840.specific_attenuation_coefficients (P.840-9 Rayleigh model).
  const test::CsvTable t =
      test::read_csv(test::testdata("reference/itur_p840_cloud_liquid_coefficient.csv"));
  ASSERT_GT(t.size(), 50u);
  for (std::size_t r = 0; r < t.size(); ++r) {
    const double f = t.number(r, "f_GHz");
    for (const auto& [column, tk] : {std::pair{"Kl_T0C", 273.15}, std::pair{"Kl_Tm10C", 263.15},
                                     std::pair{"Kl_Tm20C", 253.15}}) {
      EXPECT_NEAR(cloud_liquid_specific_attenuation_db_per_km_per_g_m3(f, tk), t.number(r, column),
                  1e-6 * t.number(r, column))
          << f << " GHz " << column;
    }
  }
}

SiteParameters sea_level_standard() {
  SiteParameters site;  // 288.15 K, 1013.25 hPa, 6.5 K/km, tropopause 11 km
  site.pwv_mm = 10.0;
  return site;
}

TEST(ParametricProfile, HydrostaticPressureFollowsUs1976) {
  // Integrating dP/dz = -g(z) P / (R_d T) with g = g0 (R/(R+z))^2 is the geopotential form of
  // the 1976 standard; the remaining difference is the lapse rate applied per geometric
  // rather than geopotential km (< 0.03 K at 5 km), hence 3e-4.
  LayerGrid grid;
  grid.layer_count = 400;
  const AtmosphereProfile profile = make_parametric_profile(sea_level_standard(), grid);
  for (const AtmosphereLayer& l : profile.layers()) {
    if (l.mid_m() > 10500.0) break;
    EXPECT_NEAR(l.pressure_hpa / us_standard_atmosphere_1976(l.mid_m()).pressure_hpa, 1.0, 3e-4)
        << l.mid_m();
  }
}

TEST(ParametricProfile, TemperatureStructureAndKnots) {
  SiteParameters site = sea_level_standard();
  site.altitude_m = 2000.0;
  site.surface_temperature_k = 280.0;
  site.surface_pressure_hpa = 800.0;
  site.tropopause_m = 12000.0;
  site.inversion = Inversion{500.0, 200.0, 6.0};
  const AtmosphereProfile profile = make_parametric_profile(site);
  bool tropopause_boundary = false, inversion_base = false, inversion_top = false;
  for (const AtmosphereLayer& l : profile.layers()) {
    tropopause_boundary |= std::abs(l.base_m - 12000.0) < 1e-6;
    inversion_base |= std::abs(l.base_m - 2500.0) < 1e-6;
    inversion_top |= std::abs(l.base_m - 2700.0) < 1e-6;
    const double z = l.mid_m();
    double expected = 280.0 - 6.5e-3 * (std::min(z, 12000.0) - 2000.0);
    if (z > 2500.0) expected += 6.0 * std::min((z - 2500.0) / 200.0, 1.0);
    EXPECT_NEAR(l.temperature_k, expected, 1e-9) << z;
  }
  EXPECT_TRUE(tropopause_boundary);
  EXPECT_TRUE(inversion_base);
  EXPECT_TRUE(inversion_top);
  EXPECT_NEAR(profile.pwv_mm(), 10.0, 1e-9);
  EXPECT_NEAR(profile.ground_altitude_m(), 2000.0, 1e-9);
  EXPECT_GE(profile.size(), 48u);
  EXPECT_NEAR(profile.layers().front().thickness_m(), 38.0, 12.0);  // fine near the ground
}

TEST(ParametricProfile, HumidityFromRelativeHumidityAndScaling) {
  SiteParameters site;
  site.surface_relative_humidity_pct = 50.0;
  const AtmosphereProfile profile = make_parametric_profile(site);
  const AtmosphereLayer& ground = profile.layers().front();
  // Surface vapour: 50 % of saturation, decaying with the 2 km scale height; the lowest layer
  // holds its mean over the layer.
  const double rho0 = vapour_density_kg_m3(0.5 * saturation_vapour_pressure_hpa(288.15), 288.15);
  const double h = ground.thickness_m();
  EXPECT_NEAR(ground.vapour_density_kg_m3, rho0 * 2000.0 / h * -std::expm1(-h / 2000.0), 1e-15);
  // Column of an exponential to 40 km: rho0 H (1 - exp(-40 km / H)), exact with layer means.
  EXPECT_NEAR(profile.pwv_mm(), rho0 * 2000.0 * -std::expm1(-20.0), 1e-12);
  const AtmosphereProfile scaled = profile.scaled_to_pwv(3.0);
  EXPECT_NEAR(scaled.pwv_mm(), 3.0, 1e-12);
  EXPECT_NEAR(scaled.layers()[5].vapour_density_kg_m3 / profile.layers()[5].vapour_density_kg_m3,
              3.0 / profile.pwv_mm(), 1e-12);
}

TEST(ParametricProfile, RejectsBadSites) {
  auto expect_field = [](SiteParameters site, const std::string& field) {
    try {
      make_parametric_profile(site);
      ADD_FAILURE() << "no error for " << field;
    } catch (const InvalidInput& e) {
      EXPECT_NE(std::string(e.what()).find(field), std::string::npos) << e.what();
    }
  };
  SiteParameters site = sea_level_standard();
  site.pwv_mm = -0.5;
  expect_field(site, "pwv_mm = -0.5");
  site = sea_level_standard();
  site.surface_temperature_k = std::nan("");
  expect_field(site, "surface_temperature_k = nan");
  site = sea_level_standard();
  site.surface_relative_humidity_pct = 20.0;
  expect_field(site, "exactly one of pwv_mm and surface_relative_humidity_pct");
  site = sea_level_standard();
  site.tropopause_m = 500.0;
  expect_field(site, "tropopause_m = 500");
  site = sea_level_standard();
  site.water_scale_height_m = 0.0;
  expect_field(site, "water_scale_height_m = 0");
}

TEST(Sounding, ReadsCsvAndComputesColumn) {
  const auto levels = read_sounding_csv(test::testdata("reference/soundings/may4_sounding.csv"));
  ASSERT_EQ(levels.size(), 30u);
  EXPECT_NEAR(levels.front().height_m, 345.0, 1e-9);
  EXPECT_NEAR(levels.front().pressure_hpa, 959.0, 1e-9);
  EXPECT_NEAR(levels.front().temperature_k, 295.35, 1e-9);
  // The vapour_density_g_m3 column wins when present.
  EXPECT_NEAR(levels.front().vapour_density_kg_m3, 16.10313547e-3, 1e-12);
  const AtmosphereProfile profile = profile_from_sounding(levels);
  EXPECT_NEAR(profile.ground_altitude_m(), 345.0, 1e-9);
  EXPECT_NEAR(profile.top_altitude_m(), 10058.0, 1e-9);
}

class SoundingFile : public ::testing::Test {
 protected:
  std::filesystem::path write(const std::string& text) {
    path_ = std::filesystem::temp_directory_path() /
            ("wvr_sounding_" + std::to_string(::testing::UnitTest::GetInstance()->random_seed()) +
             "_" + ::testing::UnitTest::GetInstance()->current_test_info()->name() + ".csv");
    std::ofstream(path_) << text;
    return path_;
  }
  void TearDown() override { std::filesystem::remove(path_); }
  std::filesystem::path path_;
};

std::string error_of(const std::filesystem::path& path) {
  try {
    read_sounding_csv(path);
  } catch (const InvalidInput& e) {
    return e.what();
  }
  return "";
}

TEST_F(SoundingFile, DewpointAndRelativeHumidityColumns) {
  const auto dew = write(
      "# comment\nheight_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,15,5\n1000,900,8,0\n");
  const auto levels = read_sounding_csv(dew);
  ASSERT_EQ(levels.size(), 2u);
  EXPECT_NEAR(levels[0].vapour_density_kg_m3,
              vapour_density_kg_m3(saturation_vapour_pressure_hpa(278.15), 288.15), 1e-15);
  const auto rh = write(
      "height_m,pressure_hpa,temperature_c,relative_humidity_pct\n0,1000,15,50\n1000,900,8,40\n");
  EXPECT_NEAR(read_sounding_csv(rh)[0].vapour_density_kg_m3,
              vapour_density_kg_m3(0.5 * saturation_vapour_pressure_hpa(288.15), 288.15), 1e-15);
}

TEST_F(SoundingFile, ErrorsNameTheLevel) {
  EXPECT_NE(
      error_of(write("height_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,15,5\n0,900,8,0\n"))
          .find("level 2"),
      std::string::npos);
  EXPECT_NE(
      error_of(write("height_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,15,5\n100,1010,8,0\n"))
          .find("does not decrease"),
      std::string::npos);
  EXPECT_NE(
      error_of(write("height_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,15,5\n100,900,x,0\n"))
          .find("line 3: temperature_c = 'x' is not a number"),
      std::string::npos);
  EXPECT_NE(error_of(write("height_m,pressure_hpa,temperature_c\n0,1000,15\n100,900,8\n"))
                .find("humidity column"),
            std::string::npos);
  EXPECT_NE(
      error_of(write("height_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,nan,5\n100,900,8,0\n"))
          .find("temperature_k = nan"),
      std::string::npos);
  EXPECT_NE(
      error_of(
          write("height_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,-290,5\n100,900,8,0\n"))
          .find("temperature_k"),
      std::string::npos);
  EXPECT_NE(
      error_of(write("height_m,pressure_hpa,temperature_c,dewpoint_c\n0,1000,10,25\n100,900,8,0\n"))
          .find("exceeds saturation"),
      std::string::npos);
  EXPECT_NE(error_of("/nonexistent/sounding.csv").find("cannot be opened"), std::string::npos);
}

TEST(RadiometerConfig, RejectsBadChannels) {
  auto error_of_config = [](const std::string& text) {
    try {
      parse_radiometer_config(text, "test.toml");
    } catch (const InvalidInput& e) {
      return std::string(e.what());
    }
    return std::string();
  };
  EXPECT_NE(error_of_config("lo_freq_ghz = 183.31\nchannels = []\n").find("channel list is empty"),
            std::string::npos);
  EXPECT_NE(error_of_config("lo_freq_ghz = 183.31\n").find("missing [[channels]]"),
            std::string::npos);
  EXPECT_NE(
      error_of_config("[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = 0.5\n").find("lo_freq_ghz"),
      std::string::npos);
  const std::string lo = "lo_freq_ghz = 183.31\n";
  EXPECT_NE(error_of_config(lo + "[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = 0\n")
                .find("bandwidth_ghz = 0"),
            std::string::npos);
  EXPECT_NE(error_of_config(lo + "[[channels]]\nif_centre_ghz = 0.2\nbandwidth_ghz = 0.5\n")
                .find("at or below 0 GHz"),
            std::string::npos);
  EXPECT_NE(error_of_config(lo + "[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = "
                                 "1\n[[channels]]\nif_centre_ghz = 1.4\nbandwidth_ghz = 1\n")
                .find("overlaps channels[0]"),
            std::string::npos);
  EXPECT_NE(error_of_config(lo + "[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = nan\n")
                .find("bandwidth_ghz = nan"),
            std::string::npos);
  EXPECT_NE(error_of_config(
                lo + "[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = 0.5\nsideband = \"both\"\n")
                .find("not one of double"),
            std::string::npos);
  EXPECT_NE(
      error_of_config("lo_freq_ghz = 999.5\n[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = 0.5\n")
          .find("sky band edge"),
      std::string::npos);
  EXPECT_NE(error_of_config("lo_freq_ghz = [").find("not valid TOML"), std::string::npos);
  // Upper and lower single-sideband channels at the same IF do not overlap on the sky.
  EXPECT_EQ(
      error_of_config(
          lo + "[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = 0.5\nsideband = \"upper\"\n"
               "[[channels]]\nif_centre_ghz = 1\nbandwidth_ghz = 0.5\nsideband = \"lower\"\n"),
      "");
}

TEST(RadiometerConfig, QuadratureWeightsAndSidebands) {
  RadiometerConfig config = parse_radiometer_config(
      "lo_freq_ghz = 183.31\n[[channels]]\nif_centre_ghz = 2\nbandwidth_ghz = 1\nsideband_ratio = "
      "3\n"
      "[[channels]]\nif_centre_ghz = 5\nbandwidth_ghz = 1\nsideband = \"lower\"\n");
  const auto q = channel_quadrature(config);
  ASSERT_EQ(q.size(), 2u);
  double total = 0.0, upper = 0.0, mean_upper = 0.0;
  for (const QuadratureNode& n : q[0]) {
    total += n.weight;
    if (n.freq_ghz > 183.31) {
      upper += n.weight;
      mean_upper += n.weight * n.freq_ghz;
    }
  }
  EXPECT_NEAR(total, 1.0, 1e-14);
  EXPECT_NEAR(upper, 0.75, 1e-14);  // ratio 3 -> upper gain 3/4
  EXPECT_NEAR(mean_upper / upper, 185.31, 1e-12);
  for (const QuadratureNode& n : q[1]) EXPECT_LT(n.freq_ghz, 183.31 - 4.5 + 1e-9);
  // Gauss-Legendre integrates polynomials of degree 2n-1 exactly over the band.
  double cubic = 0.0;
  for (const QuadratureNode& n : q[1]) cubic += n.weight * std::pow(n.freq_ghz - 178.31, 3);
  EXPECT_NEAR(cubic, 0.0, 1e-12);
}

}  // namespace
}  // namespace wvr
