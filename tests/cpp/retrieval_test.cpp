// Retrieval: self-consistency on the forward model, clouds, calibration terms and bad input.
#include "wvr/retrieval.hpp"

#include <gtest/gtest.h>

#include <cmath>
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
