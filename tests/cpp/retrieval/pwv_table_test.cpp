// The real-time table inversion against the full fit.
#include "wvr/pwv_table.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

struct TableSetup {
  SiteParameters site = load_site_config(test::testdata("sites/demo-site.toml")).parameters;
  RadiometerConfig radiometer =
      load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml"));
  PwvTableOptions options;
  PwvTable table;
  TableSetup() : table(site, radiometer, make_options()) {}
  static PwvTableOptions make_options() {
    PwvTableOptions o;
    o.min_surface_temperature_k = 260.0;
    o.max_surface_temperature_k = 280.0;
    return o;
  }
  // The full fit's model at one surface temperature.
  FastSkyModel fast_at(double t) const {
    SiteParameters s = site;
    s.surface_temperature_k = t;
    return FastSkyModel(make_parametric_profile(s), radiometer);
  }
  std::vector<double> noise() const {
    std::vector<double> n;
    for (const auto& c : radiometer.channels) n.push_back(c.noise_k);
    return n;
  }
};

const TableSetup& table_setup() {
  static const TableSetup s;
  return s;
}

void expect_agreement(double pwv, double el, double t, const FastSkyModel& fast) {
  const TableSetup& s = table_setup();
  auto ws = fast.make_workspace();
  std::vector<double> tb(4), d_fit(4), d_table(4);
  fast.evaluate(pwv, el, ws, tb);
  const std::vector<double> noise = s.noise();
  Retriever retriever(fast);
  const RetrievalResult fit = retriever.fit({tb, noise, el});
  ASSERT_TRUE(fit.ok());
  const PwvTableResult r = s.table.invert(tb, noise, el, t, d_table);
  ASSERT_EQ(r.status, PwvTableStatus::kOk) << "pwv " << pwv << " el " << el << " T " << t;
  EXPECT_NEAR(r.pwv_mm / fit.pwv_mm, 1.0, 0.005) << "pwv " << pwv << " el " << el << " T " << t;
  fast.evaluate(fit.pwv_mm, el, ws, tb, d_fit);
  for (std::size_t c = 0; c < 4; ++c) {
    EXPECT_NEAR(d_table[c] / d_fit[c], 1.0, 0.01)
        << "channel " << c << " pwv " << pwv << " el " << el;
  }
  EXPECT_NEAR(r.pwv_sigma_mm / fit.pwv_sigma_mm, 1.0, 0.01);
  EXPECT_NEAR(r.wet_path_per_pwv_m_per_mm / fast.wet_path_per_pwv_m_per_mm(el), 1.0, 0.002);
}

TEST(PwvTable, AgreesWithFullFitOnAGrid) {
  const TableSetup& s = table_setup();
  for (double t : {260.0, 270.0, 280.0}) {
    const FastSkyModel fast = s.fast_at(t);
    for (double pwv : {0.05, 0.2, 1.0, 3.0, 10.0}) {
      for (double el : {15.0, 30.0, 60.0, 90.0}) expect_agreement(pwv, el, t, fast);
    }
  }
}

TEST(PwvTable, AgreesWithFullFitAtRandomPoints) {
  const TableSetup& s = table_setup();
  std::mt19937_64 rng(17);
  std::uniform_real_distribution<double> log_pwv(std::log(0.05), std::log(10.0)), el(15.0, 90.0),
      t(260.0, 280.0);
  for (int i = 0; i < 25; ++i) {
    const double temperature = t(rng);
    expect_agreement(std::exp(log_pwv(rng)), el(rng), temperature, s.fast_at(temperature));
  }
}

TEST(PwvTable, NoisySamplesStayWithinAFractionOfSigmaOfTheFullFit) {
  const TableSetup& s = table_setup();
  const FastSkyModel fast = s.fast_at(270.0);
  auto ws = fast.make_workspace();
  Retriever retriever(fast);
  const std::vector<double> noise = s.noise();
  std::mt19937_64 rng(3);
  std::normal_distribution<double> normal;
  std::vector<double> tb(4);
  for (double pwv : {0.1, 0.5, 2.0, 6.0}) {
    for (int i = 0; i < 20; ++i) {
      fast.evaluate(pwv, 45.0, ws, tb);
      for (std::size_t c = 0; c < 4; ++c) tb[c] += noise[c] * normal(rng);
      const RetrievalResult fit = retriever.fit({tb, noise, 45.0});
      const PwvTableResult r = s.table.invert(tb, noise, 45.0, 270.0);
      ASSERT_EQ(r.status, PwvTableStatus::kOk);
      // Noise moves both estimators alike; what remains is the table's interpolation error.
      EXPECT_NEAR(r.pwv_mm, fit.pwv_mm, 0.1 * fit.pwv_sigma_mm + 2e-4 * pwv) << pwv;
    }
  }
}

TEST(PwvTable, ReportsOutOfDomain) {
  const TableSetup& s = table_setup();
  const std::vector<double> noise = s.noise();
  const std::vector<double> tb = {200.0, 120.0, 60.0, 30.0};
  EXPECT_EQ(s.table.invert(tb, noise, 10.0, 270.0).status, PwvTableStatus::kElevationOutOfDomain);
  EXPECT_EQ(s.table.invert(tb, noise, 45.0, 290.0).status, PwvTableStatus::kTemperatureOutOfDomain);
  const std::vector<double> nan_tb = {200.0, std::nan(""), 60.0, 30.0};
  EXPECT_EQ(s.table.invert(nan_tb, noise, 45.0, 270.0).status, PwvTableStatus::kBrightnessInvalid);
  const std::vector<double> cold = {2.0, 2.0, 2.0, 2.0};
  EXPECT_EQ(s.table.invert(cold, noise, 45.0, 270.0).status, PwvTableStatus::kPwvOutOfDomain);
  const std::vector<double> hot = {269.0, 268.0, 266.0, 262.0};
  EXPECT_EQ(s.table.invert(hot, noise, 45.0, 270.0).status, PwvTableStatus::kPwvOutOfDomain);
  EXPECT_STRNE(to_string(PwvTableStatus::kNoSensitiveChannel), "");
}

}  // namespace
}  // namespace wvr
