// The Rosenkranz (2017) water-vapour model against pyrtlib 1.1.1 (commit 81909855,
// TbCloudRTE, plane-parallel, ground-based; R98, R17 and R24 absorption), table
// testdata/reference/pyrtlib_downwelling_tb.csv, and against its published line list
// (testdata/reference/rosenkranz-2017/h2o_lines.csv).
//
// What differs from pyrtlib, and how each difference is handled:
// - geometry and background: matched (plane-parallel sky model, 2.728 K background);
// - brightness convention: pyrtlib reports the inverse-Planck brightness temperature; the
//   sky model's SkySpectrum::brightness_k is the same quantity (compared directly);
// - oxygen and the dry continuum: pyrtlib uses the R-model's own O2 and N2, libwvr keeps
//   ITU-R P.676-13. This is measured per row: our dry opacity (the same profile with
//   vanishing vapour) minus pyrtlib's tau_dry, propagated to brightness with the slab
//   derivative dTb/dtau = exp(-tau) (T_mr - T_bg) (T_mr, tau of the row), doubled because
//   oxygen emits from higher, colder air than the slab's mean radiating temperature
//   assumes (a bound, not an estimate);
// - transfer scheme: pyrtlib evaluates each input layer with its exponential-in-layer
//   scheme while libwvr subdivides it; at opaque frequencies (emission from the lowest
//   layer) they differ by up to a quarter of the temperature change across the lowest input
//   layer (the floor of tests/cpp/sky/sky_reference_test.cpp), plus 0.1 K.
// The brightness must lie within [min, max] of the three R-model columns widened by that
// tolerance: the spread of the published models is the allowance for model differences.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "absorption/rosenkranz2017_lines.hpp"
#include "test_util.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"
#include "wvr/sky_model.hpp"
#include "wvr/sounding.hpp"

namespace wvr {
namespace {

constexpr double kPyrtlibBackgroundK = 2.728;

std::vector<SoundingLevel> levels_from_table(const std::string& file, double vapour_scale) {
  const test::CsvTable t = test::read_csv(test::testdata(file));
  std::vector<SoundingLevel> levels;
  for (std::size_t r = 0; r < t.size(); ++r) {
    levels.push_back({t.number(r, "z_km") * 1000.0, t.number(r, "P_hPa"), t.number(r, "T_K"),
                      t.number(r, "rho_gm3") * 1e-3 * vapour_scale});
  }
  return levels;
}

SkyModel pyrtlib_like_sky(std::shared_ptr<const AbsorptionModel> model) {
  SkyOptions options;
  options.geometry = RayGeometry::kPlaneParallel;     // pyrtlib: no ray tracing
  options.cosmic_background_k = kPyrtlibBackgroundK;  // pyrtlib's background
  return SkyModel(std::move(model), options);
}

struct ReferenceProfile {
  AtmosphereProfile moist, dry;
  double transfer_floor_k = 0.0;
};

// The profiles of the table: the shipped US standard atmosphere and the dry site, whose
// header says "for another PWV, scale rho, e and rh linearly".
std::map<std::string, ReferenceProfile> reference_profiles() {
  std::map<std::string, ReferenceProfile> out;
  auto add = [&out](const std::string& name, const std::string& file, double scale) {
    const auto levels = levels_from_table(file, scale);
    out[name] = {profile_from_sounding(levels),
                 profile_from_sounding(levels_from_table(file, scale * 1e-9)),
                 0.25 * std::abs(levels[1].temperature_k - levels[0].temperature_k) + 0.1};
  };
  add("us_standard", "reference/pyrtlib_us_standard_profile.csv", 1.0);
  for (const auto& [name, pwv] :
       {std::pair{"drysite_pwv0.5mm", 0.5}, std::pair{"drysite_pwv1mm", 1.0},
        std::pair{"drysite_pwv2mm", 2.0}, std::pair{"drysite_pwv4mm", 4.0}}) {
    add(name, "reference/pyrtlib_drysite_profile_pwv1mm.csv", pwv);
  }
  return out;
}

// One line of sight of the table, with the three models' values.
struct Row {
  std::string profile;
  double elevation_deg = 0.0, f_ghz = 0.0;
  std::map<std::string, double> tb_k;  // model -> tb_total_K
  double r17_tau_wet = 0.0, r17_tau_dry = 0.0, r17_tmr_k = 0.0;
};

std::vector<Row> reference_rows() {
  const test::CsvTable t = test::read_csv(test::testdata("reference/pyrtlib_downwelling_tb.csv"));
  std::map<std::tuple<std::string, double, double>, Row> rows;
  for (std::size_t r = 0; r < t.size(); ++r) {
    const auto key =
        std::tuple{t.text(r, "profile"), t.number(r, "elevation_deg"), t.number(r, "f_GHz")};
    Row& row = rows[key];
    row.profile = std::get<0>(key);
    row.elevation_deg = std::get<1>(key);
    row.f_ghz = std::get<2>(key);
    const std::string model = t.text(r, "model");
    row.tb_k[model] = t.number(r, "tb_total_K");
    if (model == "R17") {
      row.r17_tau_wet = t.number(r, "tau_wet_Np");
      row.r17_tau_dry = t.number(r, "tau_dry_Np");
      row.r17_tmr_k = t.number(r, "tmr_K");
    }
  }
  std::vector<Row> out;
  for (auto& [key, row] : rows) out.push_back(std::move(row));
  return out;
}

TEST(Rosenkranz2017, LineTableMatchesThePublishedList) {
  // testdata/reference/rosenkranz-2017/h2o_lines.csv (pyrtlib 1.x _lineshape/h2oll_r17.py).
  const test::CsvTable t =
      test::read_csv(test::testdata("reference/rosenkranz-2017/h2o_lines.csv"));
  ASSERT_EQ(t.size(), detail::kRosenkranz2017Lines.size());
  for (std::size_t i = 0; i < t.size(); ++i) {
    const detail::Rosenkranz2017Line& l = detail::kRosenkranz2017Lines[i];
    EXPECT_EQ(l.f0_ghz, t.number(i, "freq_ghz")) << i;
    EXPECT_EQ(l.s296_hz_cm2, t.number(i, "s296")) << i;
    EXPECT_EQ(l.b, t.number(i, "b")) << i;
    EXPECT_EQ(l.w0_air_mhz_per_hpa, t.number(i, "w0_air_mhz_per_mb")) << i;
    EXPECT_EQ(l.x_air, t.number(i, "x_air")) << i;
    EXPECT_EQ(l.shift_ratio, t.number(i, "shift_ratio")) << i;
    EXPECT_EQ(l.w0_self_mhz_per_hpa, t.number(i, "w0_self_mhz_per_mb")) << i;
    EXPECT_EQ(l.x_self, t.number(i, "x_self")) << i;
  }
}

TEST(Rosenkranz2017, WaterOpacityMatchesPyrtlibR17) {
  // pyrtlib 1.1.1 TbCloudRTE, model R17, column tau_wet_Np. Both integrate the same water
  // model over the same levels; what remains is the vertical integration (pyrtlib:
  // exponential within each input layer; libwvr: its own sub-layers) and the vapour
  // pressure conversion (e = rho T / 217 in both). Allowed: 1 %.
  const auto profiles = reference_profiles();
  const SkyModel r17 = pyrtlib_like_sky(make_rosenkranz2017_model());
  double worst = 0.0;
  int rows = 0;
  for (const Row& row : reference_rows()) {
    const ReferenceProfile& p = profiles.at(row.profile);
    const std::vector<double> f = {row.f_ghz};
    const double total = r17.spectrum(p.moist, f, row.elevation_deg).opacity_np[0];
    const double dry = r17.spectrum(p.dry, f, row.elevation_deg).opacity_np[0];
    const double ratio = (total - dry) / row.r17_tau_wet;
    EXPECT_NEAR(ratio, 1.0, 0.01) << row.profile << " el " << row.elevation_deg << " f "
                                  << row.f_ghz << " GHz";
    worst = std::max(worst, std::abs(ratio - 1.0));
    ++rows;
  }
  EXPECT_GE(rows, 180);  // 184 lines of sight in the table
  std::printf("R17 water opacity vs pyrtlib R17 tau_wet: %d rows, worst |ratio - 1| = %.4f\n", rows,
              worst);
}

TEST(Rosenkranz2017, BrightnessWithinThePublishedRModelSpread) {
  const auto profiles = reference_profiles();
  const SkyModel r17 = pyrtlib_like_sky(make_rosenkranz2017_model());
  // Per frequency: worst excess over the allowed band (<= 0 passes), worst |Tb - R17 column|.
  std::map<double, std::pair<double, double>> per_frequency;
  int rows = 0;
  for (const Row& row : reference_rows()) {
    ASSERT_EQ(row.tb_k.size(), 3u) << row.profile << " " << row.f_ghz;
    const ReferenceProfile& p = profiles.at(row.profile);
    const std::vector<double> f = {row.f_ghz};
    const SkySpectrum moist = r17.spectrum(p.moist, f, row.elevation_deg);
    const double our_tau_dry = r17.spectrum(p.dry, f, row.elevation_deg).opacity_np[0];
    const double tau = moist.opacity_np[0];
    const double oxygen_k = 2.0 * std::abs(our_tau_dry - row.r17_tau_dry) * std::exp(-tau) *
                            (row.r17_tmr_k - kPyrtlibBackgroundK);
    const double tolerance = oxygen_k + p.transfer_floor_k;
    double lo = 1e9, hi = -1e9;
    for (const auto& [model, tb] : row.tb_k) {
      lo = std::min(lo, tb);
      hi = std::max(hi, tb);
    }
    const double tb = moist.brightness_k[0];
    EXPECT_GE(tb, lo - tolerance) << row.profile << " el " << row.elevation_deg << " f "
                                  << row.f_ghz << " GHz: R98/R17/R24 spread [" << lo << ", " << hi
                                  << "] K, tolerance " << tolerance << " K";
    EXPECT_LE(tb, hi + tolerance) << row.profile << " el " << row.elevation_deg << " f "
                                  << row.f_ghz << " GHz: R98/R17/R24 spread [" << lo << ", " << hi
                                  << "] K, tolerance " << tolerance << " K";
    const double outside = tb < lo ? lo - tb : (tb > hi ? tb - hi : 0.0);
    auto& [excess, residual] = per_frequency.try_emplace(row.f_ghz, -1e9, 0.0).first->second;
    excess = std::max(excess, outside - tolerance);
    residual = std::max(residual, std::abs(tb - row.tb_k.at("R17")));
    ++rows;
  }
  EXPECT_GE(rows, 180);  // 184 lines of sight in the table
  std::printf("f_GHz  max|Tb - pyrtlib R17| K  worst (outside spread - tolerance) K\n");
  for (const auto& [f, v] : per_frequency) std::printf("%7.3f %8.3f %8.3f\n", f, v.second, v.first);
}

TEST(Rosenkranz2017, PartialDerivativesMatchFiniteDifferences) {
  const auto model = make_rosenkranz2017_model();
  const std::vector<double> f = {22.235, 90.0, 183.31, 186.31, 230.0, 345.0, 557.0};
  const GasState state{540.0, 1.8, 268.0};
  std::vector<double> total(f.size());
  std::vector<AbsorptionPartials> partials(f.size());
  model->total_absorption_with_partials(f, state, total, partials);
  auto total_at = [&](const GasState& s) {
    std::vector<double> dry(f.size()), water(f.size()), sum(f.size());
    model->absorption(f, s, dry, water);
    for (std::size_t i = 0; i < f.size(); ++i) sum[i] = dry[i] + water[i];
    return sum;
  };
  const std::vector<double> plain = total_at(state);
  const double steps[3] = {0.05, 0.002, 0.01};
  for (int k = 0; k < 3; ++k) {
    GasState up = state, down = state;
    double* u = k == 0   ? &up.dry_pressure_hpa
                : k == 1 ? &up.vapour_pressure_hpa
                         : &up.temperature_k;
    double* d = k == 0   ? &down.dry_pressure_hpa
                : k == 1 ? &down.vapour_pressure_hpa
                         : &down.temperature_k;
    *u += steps[k];
    *d -= steps[k];
    const auto tu = total_at(up), td = total_at(down);
    for (std::size_t i = 0; i < f.size(); ++i) {
      EXPECT_NEAR(total[i], plain[i], 1e-12 * plain[i]);
      const double numeric = (tu[i] - td[i]) / (2.0 * steps[k]);
      const double analytic = k == 0   ? partials[i].d_dry_pressure_per_hpa
                              : k == 1 ? partials[i].d_vapour_pressure_per_hpa
                                       : partials[i].d_temperature_per_k;
      EXPECT_NEAR(analytic, numeric, 1e-5 * std::abs(numeric) + 1e-14)
          << "f " << f[i] << " GHz, variable " << k;
    }
  }
}

TEST(Rosenkranz2017, OxygenIsP676AndContinuumScales) {
  const std::vector<double> f = {60.0, 118.75, 183.31, 230.0};
  const GasState state{550.0, 1.5, 270.0};
  std::vector<double> dry_p(4), water_p(4), dry_r(4), water_r(4), dry_s(4), water_s(4);
  make_p676_annex1_model()->absorption(f, state, dry_p, water_p);
  make_rosenkranz2017_model()->absorption(f, state, dry_r, water_r);
  make_rosenkranz2017_model(1.2)->absorption(f, state, dry_s, water_s);
  for (std::size_t i = 0; i < f.size(); ++i) {
    EXPECT_DOUBLE_EQ(dry_r[i], dry_p[i]) << f[i];
    EXPECT_GT(water_s[i], water_r[i]) << f[i];
  }
  // At 230 GHz, far from lines, the continuum is a large part of the water absorption.
  EXPECT_GT(water_s[3] / water_r[3], 1.05);
  // No vapour, no water absorption.
  make_rosenkranz2017_model()->absorption(f, GasState{550.0, 0.0, 270.0}, dry_r, water_r);
  for (double w : water_r) EXPECT_EQ(w, 0.0);
}

TEST(AbsorptionModelKeys, SelectByKeyAndRefuseUnknown) {
  EXPECT_EQ(make_absorption_model("p676")->name(), make_p676_annex1_model()->name());
  EXPECT_NE(make_absorption_model("r17")->name().find("Rosenkranz (2017)"), std::string::npos);
  EXPECT_EQ(absorption_model_keys(), (std::vector<std::string>{"p676", "r17"}));
  try {
    make_absorption_model("mpm93", 1.0, "true_sky.absorption_model");
    ADD_FAILURE() << "no error";
  } catch (const InvalidInput& e) {
    EXPECT_NE(std::string(e.what()).find("true_sky.absorption_model = \"mpm93\""),
              std::string::npos)
        << e.what();
  }
  EXPECT_THROW(make_absorption_model("r17", -0.5), InvalidInput);
}

}  // namespace
}  // namespace wvr
