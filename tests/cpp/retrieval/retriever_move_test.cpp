// A moved Retriever keeps fitting with its own options, whatever becomes of the object it was
// moved from (the night retrieval moves retrievers into per-node tools).
#include <gtest/gtest.h>

#include <optional>
#include <utility>
#include <vector>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

TEST(RetrieverMove, FitUsesItsOwnOptionsAfterTheSourceIsReplaced) {
  const RadiometerConfig radiometer =
      load_radiometer_config(test::testdata("radiometers/demo-183-dsb.toml"));
  const AtmosphereProfile profile =
      make_parametric_profile(load_site_config(test::testdata("sites/demo-site.toml")).parameters);
  const FastSkyModel fast(profile, radiometer);
  std::vector<double> noise;
  for (const auto& c : radiometer.channels) noise.push_back(c.noise_k);
  auto ws = fast.make_workspace();
  std::vector<double> tb(radiometer.channels.size());
  fast.evaluate(2.0, 40.0, ws, tb);

  // A tight prior far from the truth pulls the fit visibly: the result tells which prior the
  // fit used.
  RetrievalOptions near_truth;
  near_truth.pwv_prior_mm = GaussianPrior{2.0, 0.01};
  RetrievalOptions far_away = near_truth;
  far_away.pwv_prior_mm = GaussianPrior{6.0, 0.01};

  std::optional<Retriever> source(std::in_place, fast, near_truth);
  Retriever moved(std::move(*source));
  // New options at the very address the moved-from retriever kept its own.
  source.reset();
  source.emplace(fast, far_away);

  const RetrievalResult expected = Retriever(fast, near_truth).fit({tb, noise, 40.0});
  const RetrievalResult got = moved.fit({tb, noise, 40.0});
  ASSERT_TRUE(got.ok()) << got.brief_report();
  EXPECT_NEAR(got.pwv_mm, 2.0, 1e-3) << got.brief_report();
  EXPECT_DOUBLE_EQ(got.pwv_mm, expected.pwv_mm);
  EXPECT_DOUBLE_EQ(got.chi2_per_dof, expected.chi2_per_dof);
}

}  // namespace
}  // namespace wvr
