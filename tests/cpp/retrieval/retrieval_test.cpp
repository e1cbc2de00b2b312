// Retrieval: self-consistency on the forward model, clouds, calibration terms and bad input.
#include "wvr/retrieval.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <map>
#include <random>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

struct DemoRadiometer {
  RadiometerConfig radiometer =
      load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml"));
  AtmosphereProfile profile =
      make_parametric_profile(load_site_config(test::testdata("sites/demo-site.toml")).parameters);
  FastSkyModel fast{profile, radiometer};
  std::vector<double> noise() const {
    std::vector<double> n;
    for (const auto& c : radiometer.channels) n.push_back(c.noise_k);
    return n;
  }
};

const DemoRadiometer& demo() {
  static const DemoRadiometer s;
  return s;
}

TEST(Retrieval, NoiselessBrightnessGivesTheTruePwv) {
  const DemoRadiometer& s = demo();
  Retriever retriever(s.fast);
  auto ws = s.fast.make_workspace();
  std::vector<double> tb(4);
  const std::vector<double> noise = s.noise();
  for (double pwv : {0.05, 0.3, 1.0, 4.0, 10.0}) {
    for (double el : {15.0, 50.0, 90.0}) {
      s.fast.evaluate(pwv, el, ws, tb);
      const RetrievalResult r = retriever.fit({tb, noise, el});
      ASSERT_TRUE(r.ok()) << r.brief_report();
      EXPECT_NEAR(r.pwv_mm, pwv, 1e-6 * pwv + 1e-9) << r.brief_report();
      EXPECT_LT(r.chi2, 1e-8);
      EXPECT_EQ(r.dof, 3);
    }
  }
}

TEST(Retrieval, UnbiasedWithHonestUncertaintiesOnNoisyDraws) {
  // 1000 random draws across PWV 0.05-10 mm and elevation 15-90 deg with the radiometer's
  // noise: bias of the pulls (fit - truth) / sigma below 0.2 and their spread within 10 % of 1.
  const DemoRadiometer& s = demo();
  Retriever retriever(s.fast);
  auto ws = s.fast.make_workspace();
  std::vector<double> tb(4);
  const std::vector<double> noise = s.noise();
  std::mt19937_64 rng(42);
  std::uniform_real_distribution<double> log_pwv(std::log(0.05), std::log(10.0)),
      el_draw(15.0, 90.0);
  std::normal_distribution<double> normal;
  double sum = 0.0, sum2 = 0.0;
  int n = 0;
  for (int i = 0; i < 1000; ++i) {
    const double pwv = std::exp(log_pwv(rng));
    const double el = el_draw(rng);
    s.fast.evaluate(pwv, el, ws, tb);
    for (std::size_t c = 0; c < 4; ++c) tb[c] += noise[c] * normal(rng);
    const RetrievalResult r = retriever.fit({tb, noise, el});
    ASSERT_TRUE(r.ok()) << r.brief_report();
    const double pull = (r.pwv_mm - pwv) / r.pwv_sigma_mm;
    sum += pull;
    sum2 += pull * pull;
    ++n;
  }
  const double mean = sum / n;
  const double spread = std::sqrt(sum2 / n - mean * mean);
  EXPECT_LT(std::abs(mean), 0.2);
  EXPECT_NEAR(spread, 1.0, 0.1);
  RecordProperty("pull_mean", std::to_string(mean));
  RecordProperty("pull_spread", std::to_string(spread));
}

TEST(Retrieval, ReportsBadInputAsStatus) {
  const DemoRadiometer& s = demo();
  Retriever retriever(s.fast);
  const std::vector<double> noise = s.noise();
  std::vector<double> tb = {200.0, 120.0, 60.0, std::nan("")};
  RetrievalResult r = retriever.fit({tb, noise, 50.0});
  EXPECT_EQ(r.status, RetrievalStatus::kInvalidInput);
  EXPECT_NE(r.message.find("brightness_k[3] = nan"), std::string::npos) << r.message;
  tb[3] = 30.0;
  r = retriever.fit({tb, noise, 4.0});
  EXPECT_EQ(r.status, RetrievalStatus::kOutOfDomain);
  const std::vector<double> three = {1.0, 2.0, 3.0};
  EXPECT_EQ(retriever.fit({three, noise, 50.0}).status, RetrievalStatus::kInvalidInput);
  std::vector<double> zero_noise = noise;
  zero_noise[1] = 0.0;
  EXPECT_EQ(retriever.fit({tb, zero_noise, 50.0}).status, RetrievalStatus::kInvalidInput);
  RetrievalOptions bad;
  bad.pwv_prior_mm = GaussianPrior{1.0, -1.0};
  EXPECT_THROW(Retriever(s.fast, bad), InvalidInput);
}

}  // namespace
}  // namespace wvr

namespace wvr {
namespace {

// PWV retrieved from brightness computed by an independent radiative-transfer code with the
// Rosenkranz 2024 absorption model (pyrtlib 1.1.1, commit 81909855, TbCloudRTE, plane-parallel;
// testdata/reference/pyrtlib_downwelling_tb.csv) for the synthetic dry high site at 0.5, 1 and
// 2 mm. Tolerance 5 %: the two models' wet opacities differ by up to 4-5 % on the 183 GHz
// wings for these profiles (measured in sky_reference_test against the same table), and
// retrieved PWV moves about in proportion to the opacity scale.
TEST(Retrieval, RecoversPwvFromRosenkranzModelBrightness) {
  const test::CsvTable rows =
      test::read_csv(test::testdata("reference/pyrtlib_downwelling_tb.csv"));
  const test::CsvTable levels =
      test::read_csv(test::testdata("reference/pyrtlib_drysite_profile_pwv1mm.csv"));
  std::vector<SoundingLevel> sounding;
  for (std::size_t r = 0; r < levels.size(); ++r) {
    sounding.push_back({levels.number(r, "z_km") * 1000.0, levels.number(r, "P_hPa"),
                        levels.number(r, "T_K"), levels.number(r, "rho_gm3") * 1e-3});
  }
  const AtmosphereProfile shape = profile_from_sounding(sounding);
  // Narrow double-sideband channels at the table's offsets.
  RadiometerConfig radiometer;
  radiometer.name = "narrow DSB channels at the reference offsets";
  radiometer.lo_freq_ghz = 183.31;
  const std::vector<double> offsets = {1.0, 3.0, 5.0, 7.5};
  for (double offset : offsets)
    radiometer.channels.push_back({"", offset, 0.002, Sideband::kDouble, 1.0, 0.1});
  radiometer.quadrature_points_per_sideband = 1;
  SkyOptions options;
  options.geometry = RayGeometry::kPlaneParallel;
  options.cosmic_background_k = 2.728;
  const FastSkyModel fast(shape, radiometer, SkyModel(make_p676_annex1_model(), options));
  Retriever retriever(fast);
  const std::vector<double> noise(offsets.size(), 0.1);
  for (const auto& [name, pwv] :
       {std::pair{"drysite_pwv0.5mm", 0.5}, std::pair{"drysite_pwv1mm", 1.0},
        std::pair{"drysite_pwv2mm", 2.0}}) {
    for (double el : {90.0, 30.0}) {
      // DSB brightness of each channel for each Rosenkranz version: each sideband is a
      // monochromatic row, so their radiances (RJ brightness) are averaged.
      std::map<std::string, std::vector<double>> tb;
      std::map<std::string, double> wet_tau;  // summed over the channels' sidebands
      std::vector<double> sideband_ghz;
      int found = 0;
      for (std::size_t r = 0; r < rows.size(); ++r) {
        if (rows.text(r, "profile") != name || rows.number(r, "elevation_deg") != el) continue;
        const double offset = std::abs(rows.number(r, "offset_GHz"));
        if (std::isnan(offset)) continue;
        const std::string model = rows.text(r, "model");
        for (std::size_t c = 0; c < offsets.size(); ++c) {
          if (std::abs(offset - offsets[c]) > 1e-6) continue;
          tb[model].resize(offsets.size(), 0.0);
          tb[model][c] +=
              0.5 * rj_brightness_k(rows.number(r, "f_GHz"), rows.number(r, "tb_total_K"));
          wet_tau[model] += rows.number(r, "tau_wet_Np");
          if (model == "R24") {
            sideband_ghz.push_back(rows.number(r, "f_GHz"));
            ++found;
          }
        }
      }
      ASSERT_EQ(found, 8) << name;
      ASSERT_EQ(tb.size(), 3u) << name;
      // Expected PWV error: the retrieval matches the brightness, so it scales PWV by the
      // ratio of R24's wet opacity to ours over the channels' sidebands (ours: the same
      // profile scaled to this PWV, minus the dry one). Allowed around it: the spread of the
      // three Rosenkranz versions' summed wet opacity (1.5-1.6 % here), for what the opacity
      // ratio misses (the channels weight their sidebands by the emission, not evenly).
      // Measured: errors -1.1 to -2.0 % where -1.7 to -1.9 % is expected.
      const SkyModel plane_sky(make_p676_annex1_model(), options);
      const SkySpectrum wet = plane_sky.spectrum(shape.scaled_to_pwv(pwv), sideband_ghz, el);
      const SkySpectrum dry = plane_sky.spectrum(shape.scaled_to_pwv(0.0), sideband_ghz, el);
      double ours_wet_tau = 0.0;
      for (std::size_t k = 0; k < sideband_ghz.size(); ++k)
        ours_wet_tau += wet.opacity_np[k] - dry.opacity_np[k];
      const double expected_error = wet_tau.at("R24") / ours_wet_tau - 1.0;
      // Allowed chi^2: residuals no larger than the versions' brightness spread in each
      // channel over the 0.1 K noise, summed. Loose (hundreds to thousands: the versions differ
      // by K in the opaque channels), it catches a swapped channel or a wrong sideband, not a
      // percent-level opacity error.
      double tau_lo = 1e9, tau_hi = 0.0;
      for (const auto& [model, tau] : wet_tau) {
        tau_lo = std::min(tau_lo, tau);
        tau_hi = std::max(tau_hi, tau);
      }
      double chi2_allowed = 0.0;
      for (std::size_t c = 0; c < offsets.size(); ++c) {
        double lo = 1e9, hi = 0.0;
        for (const auto& [model, k] : tb) {
          lo = std::min(lo, k[c]);
          hi = std::max(hi, k[c]);
        }
        chi2_allowed += std::pow((hi - lo) / noise[c], 2);
      }
      const RetrievalResult fit = retriever.fit({tb.at("R24"), noise, el});
      ASSERT_TRUE(fit.ok()) << fit.brief_report();
      std::cout << name << " el " << el << ": PWV error " << fit.pwv_mm / pwv - 1.0 << ", expected "
                << expected_error << ", model spread " << tau_hi / tau_lo - 1.0 << "; chi2 "
                << fit.chi2 << ", allowed " << chi2_allowed << "\n";
      EXPECT_NEAR(fit.pwv_mm / pwv - 1.0, expected_error, tau_hi / tau_lo - 1.0)
          << name << " el " << el << ": " << fit.brief_report();
      EXPECT_LE(fit.chi2, chi2_allowed) << name << " el " << el << ": " << fit.brief_report();
    }
  }
}

}  // namespace
}  // namespace wvr
