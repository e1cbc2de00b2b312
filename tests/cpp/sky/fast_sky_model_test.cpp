// The fast channel model against the exact line-by-line path, and its own Jacobians.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

AtmosphereProfile demo_profile() {
  SiteParameters site = load_site_config(test::testdata("sites/demo-site.toml")).parameters;
  return make_parametric_profile(site);
}

RadiometerConfig radiometer(const char* name) {
  return load_radiometer_config(test::testdata(std::string("radiometers/") + name));
}

TEST(FastSkyModel, AgreesWithExactModelOverTheDomain) {
  const AtmosphereProfile base = demo_profile();
  for (const char* name : {"demo-183-dsb.toml", "demo-22-ssb.toml"}) {
    const RadiometerConfig r = radiometer(name);
    const SkyModel exact;
    const FastSkyModel fast(base, r, exact);
    auto ws = fast.make_workspace();
    std::vector<double> tb(fast.channel_count()), dp(tb.size()), dt(tb.size());
    double worst = 0.0, worst_jacobian = 0.0;
    for (double pwv : {0.1, 0.3, 1.0, 2.5, 5.0, 8.0}) {
      for (double el : {15.0, 25.0, 45.0, 70.0, 90.0}) {
        ASSERT_EQ(fast.evaluate(pwv, el, ws, tb, dp, dt), FastModelStatus::kOk);
        const ChannelBrightness c = exact.channels(base.scaled_to_pwv(pwv), r, el);
        for (std::size_t k = 0; k < tb.size(); ++k) {
          EXPECT_NEAR(tb[k], c.brightness_k[k], 0.02) << name << " pwv " << pwv << " el " << el;
          worst = std::max(worst, std::abs(tb[k] - c.brightness_k[k]));
          EXPECT_NEAR(dp[k], c.d_brightness_d_pwv_k_per_mm[k],
                      1e-3 * std::abs(c.d_brightness_d_pwv_k_per_mm[k]) + 1e-4);
          EXPECT_NEAR(dt[k], c.d_brightness_d_temperature[k],
                      1e-3 * std::abs(c.d_brightness_d_temperature[k]) + 1e-4);
          worst_jacobian =
              std::max(worst_jacobian, std::abs(dp[k] / c.d_brightness_d_pwv_k_per_mm[k] - 1));
        }
      }
    }
    RecordProperty(std::string("worst_difference_k_") + name, std::to_string(worst));
    std::cout << name << ": worst |fast - exact| = " << worst << " K, worst relative dTb/dPWV "
              << worst_jacobian << "\n";
  }
}

TEST(FastSkyModel, AgreesWithExactModelAtRandomPoints) {
  const AtmosphereProfile base = demo_profile();
  const RadiometerConfig r = radiometer("demo-183-dsb.toml");
  const SkyModel exact;
  const FastSkyModel fast(base, r, exact);
  auto ws = fast.make_workspace();
  std::vector<double> tb(fast.channel_count());
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> pwv_draw(0.1, 8.0), el_draw(15.0, 90.0);
  for (int i = 0; i < 40; ++i) {
    const double pwv = pwv_draw(rng), el = el_draw(rng);
    ASSERT_EQ(fast.evaluate(pwv, el, ws, tb), FastModelStatus::kOk);
    const ChannelBrightness c = exact.channels(base.scaled_to_pwv(pwv), r, el);
    for (std::size_t k = 0; k < tb.size(); ++k) {
      EXPECT_NEAR(tb[k], c.brightness_k[k], 0.02) << "pwv " << pwv << " el " << el;
    }
  }
}

TEST(FastSkyModel, JacobiansMatchCentralFiniteDifferencesOfTheFastModel) {
  const FastSkyModel fast(demo_profile(), radiometer("demo-183-dsb.toml"));
  auto ws = fast.make_workspace();
  const std::size_t n = fast.channel_count();
  std::vector<double> tb(n), dp(n), dt(n), up(n), down(n);
  for (double pwv : {0.2, 1.5, 7.0}) {
    ASSERT_EQ(fast.evaluate(pwv, 40.0, ws, tb, dp, dt), FastModelStatus::kOk);
    const double h = 1e-4;
    fast.evaluate(pwv + h, 40.0, ws, up);
    fast.evaluate(pwv - h, 40.0, ws, down);
    for (std::size_t k = 0; k < n; ++k) {
      const double fd = (up[k] - down[k]) / (2 * h);
      EXPECT_NEAR(dp[k], fd, 1e-4 * std::abs(fd)) << "pwv " << pwv << " channel " << k;
    }
  }
}

TEST(FastSkyModel, ReportsOutOfDomainInsteadOfThrowing) {
  const FastSkyModel fast(demo_profile(), radiometer("demo-183-dsb.toml"));
  auto ws = fast.make_workspace();
  std::vector<double> tb(fast.channel_count()), wrong(1);
  EXPECT_EQ(fast.evaluate(-0.1, 40.0, ws, tb), FastModelStatus::kPwvOutOfDomain);
  EXPECT_EQ(fast.evaluate(12.5, 40.0, ws, tb), FastModelStatus::kPwvOutOfDomain);
  EXPECT_EQ(fast.evaluate(std::nan(""), 40.0, ws, tb), FastModelStatus::kPwvOutOfDomain);
  EXPECT_EQ(fast.evaluate(1.0, 4.0, ws, tb), FastModelStatus::kElevationOutOfDomain);
  EXPECT_EQ(fast.evaluate(1.0, std::nan(""), ws, tb), FastModelStatus::kElevationOutOfDomain);
  EXPECT_EQ(fast.evaluate(1.0, 40.0, ws, wrong), FastModelStatus::kBufferSizeMismatch);
  FastModelStatus status = FastModelStatus::kOk;
  EXPECT_STRNE(to_string(status), "");
}

TEST(FastSkyModel, WetPathMatchesExactSlantPath) {
  const AtmosphereProfile base = demo_profile();
  const FastSkyModel fast(base, radiometer("demo-183-dsb.toml"));
  for (double el : {20.0, 60.0, 90.0}) {
    const SlantPath path = SkyModel().slant_path(base, el);
    EXPECT_NEAR(fast.wet_path_per_pwv_m_per_mm(el), path.wet_path_m / base.pwv_mm(), 1e-9);
  }
}

}  // namespace
}  // namespace wvr

namespace wvr {
namespace {

TEST(FastSkyModel, CloudLiquidMatchesExactModelAndItsJacobian) {
  const AtmosphereProfile base = demo_profile();
  const RadiometerConfig r = radiometer("demo-22-ssb.toml");
  FastSkyModelOptions options;
  options.cloud_base_above_ground_m = 800.0;
  options.cloud_thickness_m = 600.0;
  const SkyModel exact;
  const FastSkyModel fast(base, r, exact, options);
  auto ws = fast.make_workspace();
  const std::size_t n = fast.channel_count();
  std::vector<double> tb(n), dl(n), up(n), down(n);
  for (double lwp : {0.0, 0.05, 0.3}) {
    const FastSkyState state{1.5, 50.0, lwp};
    ASSERT_EQ(fast.evaluate(state, ws, tb, FastSkyJacobians{{}, {}, dl}), FastModelStatus::kOk);
    const ChannelBrightness c =
        exact.channels(base.scaled_to_pwv(1.5).with_cloud(800.0, 600.0, lwp), r, 50.0);
    for (std::size_t k = 0; k < n; ++k) EXPECT_NEAR(tb[k], c.brightness_k[k], 0.02) << lwp;
    const double h = 1e-4;
    fast.evaluate(FastSkyState{1.5, 50.0, lwp + h}, ws, up);
    fast.evaluate(FastSkyState{1.5, 50.0, std::max(lwp - h, 0.0)}, ws, down);
    for (std::size_t k = 0; k < n; ++k) {
      const double fd = (up[k] - down[k]) / (lwp > 0 ? 2 * h : h);
      EXPECT_NEAR(dl[k], fd, 1e-4 * std::abs(fd)) << lwp;
    }
  }
  // 31 GHz window (channel k4) responds to liquid far more than to vapour per kg/m^2.
  fast.evaluate(FastSkyState{1.5, 50.0, 0.1}, ws, tb, FastSkyJacobians{{}, {}, dl});
  EXPECT_GT(dl[3], 5.0);
  EXPECT_EQ(fast.evaluate(FastSkyState{1.5, 50.0, -0.1}, ws, tb),
            FastModelStatus::kLiquidOutOfDomain);
}

}  // namespace
}  // namespace wvr
