// Structure functions, broken power-law fits and frozen-flow wind: against the slab theory of
// wvr/phase_screen.hpp and on simulated nights with known layers.
#include "wvr/structure_function.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <iomanip>
#include <iostream>
#include <limits>
#include <numbers>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

// Theory curve of one layer at log-spaced separations.
struct Curve {
  std::vector<double> d_m, value_m2;
};
Curve theory_curve(double thickness_m, double outer_scale_m, double d_min_m, double d_max_m) {
  TurbulentLayer layer;
  layer.thickness_m = thickness_m;
  layer.outer_scale_m = outer_scale_m;
  const LayerSpectrum spectrum(layer);
  Curve c;
  const int n = 25;
  for (int i = 0; i < n; ++i) {
    const double d = d_min_m * std::pow(d_max_m / d_min_m, i / (n - 1.0));
    c.d_m.push_back(d);
    c.value_m2.push_back(spectrum.structure_function_m2(d));
  }
  return c;
}

TEST(StructureFunctionTheory, ThickLayerSlopeIsFiveThirds) {
  // W = 20 km >> d in [5, 200] m, outer scale far away.
  const Curve c = theory_curve(20000.0, 1e6, 5.0, 200.0);
  const BrokenPowerLawFit fit = fit_broken_power_law(c.d_m, c.value_m2);
  ASSERT_TRUE(fit.ok()) << fit.brief_report();
  EXPECT_NEAR(fit.alpha_short, 5.0 / 3.0, 0.1) << fit.brief_report();
  // The break then sits at the edge of the data and the far slope is unconstrained.
  std::cout << "thick theory: " << fit.brief_report() << "\n";
}

TEST(StructureFunctionTheory, ThinLayerSlopeIsTwoThirds) {
  // W = 5 m << d in [200, 3000] m << L0 = 1000 km.
  const Curve c = theory_curve(5.0, 1e6, 200.0, 3000.0);
  const BrokenPowerLawFit fit = fit_broken_power_law(c.d_m, c.value_m2);
  ASSERT_TRUE(fit.ok()) << fit.brief_report();
  EXPECT_NEAR(fit.alpha_long, 2.0 / 3.0, 0.1) << fit.brief_report();
  std::cout << "thin theory: " << fit.brief_report() << "\n";
}

// The slab's transition is broad and asymmetric (the thick regime is approached only
// linearly in d / W), so the break of a fit with a free transition width does not sit where
// the asymptotes cross (0.343 W, closed form) but further out, below W. Where exactly depends
// on the fit, not on physics; what physics fixes is that the curve, and so the break, scales
// with W: on the same grid in d / W the fitted break / W is the same for every W.
TEST(StructureFunctionTheory, BreakScalesWithTheThickness) {
  const double crossing_ratio = slab_break_over_thickness();
  std::vector<double> break_over_w;
  EXPECT_NEAR(crossing_ratio, 0.343, 0.001);  // closed form (see the header)
  for (double w : {100.0, 300.0, 1000.0}) {
    TurbulentLayer layer;
    layer.thickness_m = w;
    layer.outer_scale_m = 1e7;
    const LayerSpectrum spectrum(layer);
    // Asymptote constants from the numerical curve far inside each regime.
    const double d_short = w * 1e-3, d_long = w * 1e2;
    const double c_short = spectrum.structure_function_m2(d_short) / std::pow(d_short, 5.0 / 3.0);
    const double c_long = spectrum.structure_function_m2(d_long) / std::pow(d_long, 2.0 / 3.0);
    const double crossing = c_long / c_short;  // where c_short d^5/3 = c_long d^2/3
    // The numerical curve's crossing lies 8-9 % above the closed form.
    EXPECT_NEAR(crossing / w, crossing_ratio, 0.12 * crossing_ratio) << "W = " << w;

    const Curve c = theory_curve(w, 1e7, w / 100.0, w * 30.0);
    const BrokenPowerLawFit fit = fit_broken_power_law(c.d_m, c.value_m2);
    ASSERT_TRUE(fit.ok()) << fit.brief_report();
    break_over_w.push_back(fit.break_m / w);
    EXPECT_GT(fit.break_m, crossing);
    EXPECT_LT(fit.break_m, w);
    EXPECT_NEAR(fit.alpha_short, 5.0 / 3.0, 0.1) << fit.brief_report();
    EXPECT_NEAR(fit.alpha_long, 2.0 / 3.0, 0.1) << fit.brief_report();
    EXPECT_GT(fit.break_sigma_m, 0.0);
    std::cout << "W = " << w << " m: fitted break / W = " << fit.break_m / w
              << ", asymptotes cross at " << crossing / w << " W (closed form " << crossing_ratio
              << "); " << fit.brief_report() << "\n";
  }
  // The outer scale (1e7 m) is 1e4-1e5 W away, so the curves are the same in d / W and
  // break / W agrees across W to 0.3 % (measured 0.5826, 0.5829, 0.5843 for W = 100, 300,
  // 1000 m); allowed 1 %, so a break that does not scale with W (in the wrong units, or
  // pinned to a grid point) fails.
  for (double r : break_over_w) EXPECT_NEAR(r / break_over_w[0], 1.0, 0.01);
}
TEST(StructureFunctionTheory, SlabFitRecoversTheThickness) {
  for (double w : {20.0, 100.0, 600.0, 2000.0}) {
    const Curve c = theory_curve(w, 1e9, w / 30.0, w * 30.0);
    const SlabThicknessFit fit = fit_slab_thickness(c.d_m, c.value_m2);
    ASSERT_TRUE(fit.ok()) << fit.brief_report();
    EXPECT_EQ(fit.constraint, ThicknessConstraint::kMeasured);
    EXPECT_NEAR(fit.thickness_m / w, 1.0, 0.03) << fit.brief_report();
    EXPECT_LE(fit.thickness_low_m, fit.thickness_m);
    EXPECT_GE(fit.thickness_high_m, fit.thickness_m);
    EXPECT_NEAR(fit.evaluate_m2(w) / c.value_m2[12], 1.0, 0.03);  // c.d_m[12] = w
    // Regime slopes over d <= W/5 and d >= 5 W: the slab's own, short of 5/3 and above 2/3.
    ASSERT_TRUE(fit.thick.measured && fit.thin.measured) << fit.brief_report();
    EXPECT_GT(fit.thick.slope, 1.3);
    EXPECT_LT(fit.thick.slope, 5.0 / 3.0);
    EXPECT_NEAR(fit.thin.slope, 2.0 / 3.0, 0.1) << fit.brief_report();
    std::cout << "W = " << w << " m: " << fit.brief_report() << "\n";
  }
}

TEST(StructureFunctionTheory, OneRegimeGivesOnlyALimitOnTheThickness) {
  // Noisy pure power laws: nothing in them tells where the other regime starts.
  std::vector<double> d, thick, thin;
  for (int i = 0; i < 15; ++i) {
    d.push_back(20.0 * std::pow(100.0, i / 14.0));
    const double wiggle = 1.0 + 0.03 * std::sin(2.7 * i);  // +/- 3 % scatter
    thick.push_back(1e-12 * std::pow(d.back(), 5.0 / 3.0) * wiggle);
    thin.push_back(1e-9 * std::pow(d.back(), 2.0 / 3.0) * wiggle);
  }
  const SlabThicknessFit thick_fit = fit_slab_thickness(d, thick);
  ASSERT_TRUE(thick_fit.ok()) << thick_fit.brief_report();
  EXPECT_EQ(thick_fit.constraint, ThicknessConstraint::kAtLeast) << thick_fit.brief_report();
  EXPECT_GT(thick_fit.thickness_m, 2000.0);  // the longest point is 2 km
  EXPECT_NEAR(thick_fit.thick.slope, 5.0 / 3.0, 0.02);
  EXPECT_EQ(thick_fit.thick.points, d.size());
  const SlabThicknessFit thin_fit = fit_slab_thickness(d, thin);
  ASSERT_TRUE(thin_fit.ok()) << thin_fit.brief_report();
  EXPECT_EQ(thin_fit.constraint, ThicknessConstraint::kAtMost) << thin_fit.brief_report();
  EXPECT_LT(thin_fit.thickness_m, 20.0);
  EXPECT_NEAR(thin_fit.thin.slope, 2.0 / 3.0, 0.02);
  std::cout << "thick only: " << thick_fit.brief_report()
            << "\nthin only: " << thin_fit.brief_report() << "\n";
  // The broken power law keeps a single law there (BIC), but not on a real break.
  const BrokenPowerLawFit single = fit_broken_power_law(d, thin);
  EXPECT_TRUE(single.ok());
  EXPECT_FALSE(single.has_break) << single.brief_report();
  EXPECT_NEAR(single.alpha_long, 2.0 / 3.0, 0.02);
  const Curve c = theory_curve(300.0, 1e9, 10.0, 9000.0);
  const BrokenPowerLawFit broken = fit_broken_power_law(c.d_m, c.value_m2);
  EXPECT_TRUE(broken.has_break) << broken.brief_report();
  // Too few points or too narrow a span: no fit.
  const std::vector<double> two = {10.0, 15.0};
  EXPECT_EQ(fit_slab_thickness(two, two).status, DiagnosticStatus::kNoData);
  EXPECT_THROW(fit_slab_thickness(d, two), InvalidInput);
}

TEST(StructureFunctionTheory, SaturationLevelIsRecovered) {
  TurbulentLayer layer;
  layer.thickness_m = 10.0;
  layer.outer_scale_m = 2000.0;
  const LayerSpectrum spectrum(layer);
  std::vector<double> d, v;
  for (int i = 0; i < 25; ++i) {
    d.push_back(30.0 * std::pow(1000.0, i / 24.0));
    v.push_back(spectrum.structure_function_m2(d.back()));
  }
  BrokenPowerLawOptions options;
  options.fit_saturation = true;
  const BrokenPowerLawFit fit = fit_broken_power_law(d, v, options);
  ASSERT_TRUE(fit.ok()) << fit.brief_report();
  // D_sat (1 - exp(-D / D_sat)) only approximates the von Karman approach to saturation.
  EXPECT_NEAR(fit.saturation_m2 / spectrum.saturation_m2(), 1.0, 0.3) << fit.brief_report();
  std::cout << "saturating theory: " << fit.brief_report() << " (D(inf) "
            << spectrum.saturation_m2() << ")\n";
}

TEST(StructureFunctionTheory, FewPointsGiveASinglePowerLawAndBadOptionsThrow) {
  const std::vector<double> d = {10.0, 100.0, 1000.0};
  const std::vector<double> v = {1.0, std::pow(10.0, 2.0 / 3.0), std::pow(100.0, 2.0 / 3.0)};
  const BrokenPowerLawFit fit = fit_broken_power_law(d, v);
  EXPECT_EQ(fit.status, DiagnosticStatus::kTooFewPoints);
  EXPECT_NEAR(fit.alpha_short, 2.0 / 3.0, 1e-9);
  EXPECT_NEAR(fit.evaluate_m2(100.0), v[1], 1e-9 * v[1]);
  const std::vector<double> one = {5.0};
  EXPECT_EQ(fit_broken_power_law(one, one).status, DiagnosticStatus::kNoData);
  const std::vector<double> nan_values = {std::nan(""), -1.0, 0.0};
  EXPECT_EQ(fit_broken_power_law(d, nan_values).status, DiagnosticStatus::kNoData);
  EXPECT_THROW(fit_broken_power_law(d, one), InvalidInput);
  BrokenPowerLawOptions bad;
  bad.transition_width = -1.0;
  EXPECT_THROW(fit_broken_power_law(d, v, bad), InvalidInput);
  bad = {};
  bad.max_iterations = 0;
  EXPECT_THROW(fit_broken_power_law(d, v, bad), InvalidInput);
}

// ---- Simulated nights ----

std::string layer_night(double thickness_m,
                        double wind_east_m_s,
                        double wind_north_m_s,
                        std::uint64_t seed,
                        int antennas,
                        double duration_s,
                        double integration_s,
                        double path_rms_um = 500.0) {
  return "name = \"structure function night\"\nseed = " + std::to_string(seed) +
         "\nduration_s = " + std::to_string(duration_s) +
         "\nintegration_s = " + std::to_string(integration_s) + R"(
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
screen_spacing_m = 5.0
[array]
layout = "extended"
min_spacing_m = 20.0
radius_m = 1600.0
antenna_count = )" +
         std::to_string(antennas) +
         R"(
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -60.0
start_hour_angle_h = -0.5
[observing]
calibrator_scan_s = 120.0
target_scan_s = 120.0
thermal_phase_noise_deg = 1.0
[[turbulence]]
kind = "wet"
height_m = 600.0
outer_scale_m = 200000.0
path_rms_um = )" +
         std::to_string(path_rms_um) + "\nthickness_m = " + std::to_string(thickness_m) +
         "\nwind_east_m_s = " + std::to_string(wind_east_m_s) +
         "\nwind_north_m_s = " + std::to_string(wind_north_m_s) + "\n";
}

// Radiometer paths through the retrieval and the offline corrector.
AntennaPaths retrieved_paths(const Night& night, const Scenario& scenario) {
  const NightRetrieval retrieval = retrieve_night(night, scenario.site.parameters);
  return compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
}

// Spatial structure function of the radiometer paths of one-hour nights, pooled before
// binning (one hour of screen holds only a few independent samples of the km-scale structure:
// single nights scatter by 20-30 % in the slab thickness), then fitted.
struct NightFit {
  BrokenPowerLawFit measured;
  SlabThicknessFit slab;
  StructureFunctionEstimate binned;
};
NightFit fit_night(double thickness_m,
                   const std::vector<std::uint64_t>& seeds,
                   double integration_s,
                   double max_baseline_m = 1e9) {
  SpatialStructureResult sf;
  for (std::uint64_t seed : seeds) {
    const std::string text = layer_night(thickness_m, 8.0, 3.0, seed, 20, 3600.0, integration_s);
    const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
    const Night night = simulate_night(scenario);
    const AntennaPaths paths = retrieved_paths(night, scenario);
    const SpatialStructureResult one = radiometer_structure_function(night, paths);
    EXPECT_TRUE(one.ok()) << one.brief_report();
    sf.baselines.insert(sf.baselines.end(), one.baselines.begin(), one.baselines.end());
  }
  NightFit out;
  const StructureFunctionEstimate all = bin_structure_function(sf, 6.0);
  for (std::size_t i = 0; i < all.separation.size(); ++i) {
    if (all.separation[i] > max_baseline_m) continue;
    out.binned.separation.push_back(all.separation[i]);
    out.binned.value_m2.push_back(all.value_m2[i]);
    out.binned.pair_count.push_back(all.pair_count[i]);
  }
  out.measured = fit_broken_power_law(out.binned.separation, out.binned.value_m2);
  out.slab = fit_slab_thickness(out.binned.separation, out.binned.value_m2);
  std::cout << "W = " << thickness_m << " m, " << seeds.size() << " nights from seed "
            << seeds.front() << ":\n   broken power law " << out.measured.brief_report()
            << "\n   slab " << out.slab.brief_report() << "\n";
  return out;
}

TEST(StructureFunctionNight, ThickLayerGivesFiveThirdsOnShortBaselines) {
  // W = 20 km: baselines up to 300 m (d / W < 0.015, where the slab's slope is 1.57-1.67).
  // Six one-hour nights at 4 s: a single night's slope scatters by ~0.1.
  const NightFit f = fit_night(20000.0, {1000, 1001, 1002, 1003, 1004, 1005}, 4.0, 300.0);
  ASSERT_TRUE(f.measured.ok() || f.measured.status == DiagnosticStatus::kTooFewPoints)
      << f.measured.brief_report();
  EXPECT_NEAR(f.measured.alpha_short, 5.0 / 3.0, 0.1);
  ASSERT_TRUE(f.slab.thick.measured) << f.slab.brief_report();
  EXPECT_NEAR(f.slab.thick.slope, 5.0 / 3.0, 0.1);
  // W lies far beyond the points: only a lower limit is claimed.
  EXPECT_EQ(f.slab.constraint, ThicknessConstraint::kAtLeast) << f.slab.brief_report();
}

TEST(StructureFunctionNight, ThinLayerGivesTwoThirdsOnLongBaselines) {
  // W = 5 m: baselines 40 m - 2.5 km are all in the thin regime (d / W = 8 .. 500, where the
  // slab's slope is 0.75 .. 0.67). Seen on 4 s samples of six one-hour nights.
  const NightFit f = fit_night(5.0, {2000, 2001, 2002, 2003, 2004, 2005}, 4.0);
  ASSERT_TRUE(f.slab.ok()) << f.slab.brief_report();
  ASSERT_TRUE(f.slab.thin.measured) << f.slab.brief_report();
  EXPECT_NEAR(f.slab.thin.slope, 2.0 / 3.0, 0.1);
  // W lies below the shortest baseline: only an upper limit is claimed.
  EXPECT_EQ(f.slab.constraint, ThicknessConstraint::kAtMost) << f.slab.brief_report();
  EXPECT_LE(f.slab.thickness_m, 45.0);
}

// One-hour nights of one layer (W given, 8.5 m/s) and their radiometer paths.
struct LayerNights {
  std::vector<Night> nights;
  std::vector<AntennaPaths> paths;
};
LayerNights layer_nights(double thickness_m, std::uint64_t first_seed, int count) {
  LayerNights out;
  for (std::uint64_t seed = first_seed; seed < first_seed + static_cast<std::uint64_t>(count);
       ++seed) {
    const std::string text = layer_night(thickness_m, 8.0, 3.0, seed, 20, 3600.0, 4.0);
    const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
    out.nights.push_back(simulate_night(scenario));
    out.paths.push_back(retrieved_paths(out.nights.back(), scenario));
  }
  return out;
}

// ln(W / truth) in units of the stated 1-sigma interval on its side (the interval is
// asymmetric in W, symmetric in ln W for the jackknife part).
double slab_pull(const SlabThicknessFit& f, double truth_m) {
  const double error = std::log(f.thickness_m / truth_m);
  return error / (error > 0.0 ? std::log(f.thickness_m / f.thickness_low_m)
                              : std::log(f.thickness_high_m / f.thickness_m));
}

// The measured spread and pulls behind the tolerances below (run with
// --gtest_also_run_disabled_tests; about 2 min). Seeds 3000-3023 at W = 600 m and 4000-4023 at
// 300 m, one-hour nights; single nights with 12 segments, and four sets of six nights pooled
// with 24 groups. Measured:
//   600 m: single nights mean ln(W / W0) +0.20, sd 0.38, W 387-1838 m; pull rms 0.96 (largest
//          2.0) against 17.6 with the points' interval alone and 3.35 with 4 segments (seeds
//          3007 and 3016: sigma ln W 0.02 and 0.07, pulls -14.7 and -6.0); pooled sets W 722,
//          646, 555, 725 m: mean +0.09, sd 0.11, pull rms 0.59 (points' interval alone: 14.2).
//   300 m: single nights +0.04, sd 0.25, W 193-459 m; pull rms 0.97 (4 segments: 1.01; points'
//          interval: infinite, one night's interval had zero width); pooled sets W 280, 372,
//          273, 267 m: mean -0.02, sd 0.13, pull rms 0.79 (points' interval: 6.6; delete-a-night
//          with 6 groups: 3.3, the six nights 4006-4011 agreed within 10 % by chance).
TEST(StructureFunctionNight, DISABLED_SlabThicknessSpreadOverSeeds) {
  for (const auto& [w, first_seed] : {std::pair{600.0, 3000}, std::pair{300.0, 4000}}) {
    double sum = 0.0, sum2 = 0.0, pull2 = 0.0, pool_sum = 0.0, pool_sum2 = 0.0, pool_pull2 = 0.0;
    int measured = 0, pools = 0;
    for (int set = 0; set < 4; ++set) {
      const LayerNights sky = layer_nights(w, static_cast<std::uint64_t>(first_seed + 6 * set), 6);
      for (std::size_t i = 0; i < sky.nights.size(); ++i) {
        const NightSlabThickness one = night_slab_thickness(sky.nights[i], sky.paths[i], {}, 6.0);
        std::cout << "W = " << w << " m, seed " << first_seed + 6 * set + static_cast<int>(i)
                  << ": " << one.brief_report() << "\n";
        if (one.fit.constraint != ThicknessConstraint::kMeasured) continue;
        const double e = std::log(one.fit.thickness_m / w), p = slab_pull(one.fit, w);
        sum += e;
        sum2 += e * e;
        pull2 += p * p;
        ++measured;
        std::cout << "   ln(W / W0) " << e << ", pull " << p << "\n";
      }
      const NightSlabThickness pooled = pooled_slab_thickness(sky.nights, sky.paths, {}, 6.0, 24);
      const double e = std::log(pooled.fit.thickness_m / w), p = slab_pull(pooled.fit, w);
      pool_sum += e;
      pool_sum2 += e * e;
      pool_pull2 += p * p;
      ++pools;
      std::cout << "W = " << w << " m, six nights pooled: " << pooled.brief_report()
                << "\n   ln(W / W0) " << e << ", pull " << p << "\n";
    }
    const double n = measured, m = pools;
    std::cout << "W = " << w << " m: " << measured << " single nights measured, mean ln(W / W0) "
              << sum / n << ", sd " << std::sqrt(sum2 / n - sum * sum / (n * n)) << ", pull rms "
              << std::sqrt(pull2 / n) << "; pooled: mean " << pool_sum / m << ", sd "
              << std::sqrt(std::max(0.0, pool_sum2 / m - pool_sum * pool_sum / (m * m)))
              << ", pull rms " << std::sqrt(pool_pull2 / m) << "\n";
  }
}

// Where the bias of W comes from (run with --gtest_also_run_disabled_tests; about 3 min).
// Twelve one-hour nights of a 600 m layer (seeds 3000-3011); per bin, the binned D of the TRUE
// wet paths over the LayerSpectrum theory (times the mean airmass squared), averaged over the
// nights, and the ratio expected from removing each baseline's mean over the night alone
// (the variance of that mean from the theory D of the difference series along the flow).
// Measured (40 m .. 2.45 km, 12 bins):
//   observed 0.967 0.989 0.982 0.977 0.970 0.976 0.971 0.987 0.968 0.959 0.924 0.843
//   expected 0.992 0.992 0.989 0.987 0.985 0.981 0.972 0.974 0.958 0.943 0.930 0.898
// so the shortfall at the long baselines is mostly the finite night (the last bin's mean
// carries +/- 0.06 of sample variance): the screen follows the theory to 1-3 %. Fits (true
// and retrieved paths agree to 1-2 % per night but for one, 1568 and 1204 m, so neither the
// retrieval nor the radiometer noise matters here): the theory at the bins gives 600.3 m, the
// theory times the expected ratio 587 m (the outer scale takes up the shortfall), the theory
// times the observed ratio 675 m, like the twelve nights pooled (675 m): the step from 587 to
// 675 m is the observed ratio's sample variance in its last two bins, the fit being that
// sensitive to them. No bias in the fit or its model, then; the spread is the sky's.
TEST(StructureFunctionNight, DISABLED_SlabBiasFromTheNightsLength) {
  const double w = 600.0;
  const LayerSpectrum spectrum(TurbulentLayer{600.0, w, 200000.0, 8.0, 3.0, 500e-6, 1000.0});
  const LayerNights sky = layer_nights(w, 3000, 12);
  SpatialStructureResult pooled_truth;
  std::vector<double> bins, ratio;
  for (std::size_t n = 0; n < sky.nights.size(); ++n) {
    const Night& night = sky.nights[n];
    AntennaPaths truth = sky.paths[n];
    for (std::size_t i = 0; i < truth.path_mm.size(); ++i)
      truth.path_mm[i] = night.truth->wet_path_m[i] * 1e3;
    const SpatialStructureResult t = radiometer_structure_function(night, truth);
    pooled_truth.baselines.insert(pooled_truth.baselines.end(), t.baselines.begin(),
                                  t.baselines.end());
    double airmass2 = 0.0;
    for (double e : night.pointing.elevation_deg)
      airmass2 += std::pow(std::sin(e * std::numbers::pi / 180.0), -2.0) /
                  static_cast<double>(night.pointing.elevation_deg.size());
    const StructureFunctionEstimate b = bin_structure_function(t, 6.0);
    if (bins.empty()) {
      bins = b.separation;
      ratio.assign(bins.size(), 0.0);
    }
    ASSERT_EQ(b.separation.size(), bins.size());
    for (std::size_t i = 0; i < bins.size(); ++i) {
      ratio[i] += b.value_m2[i] / (spectrum.structure_function_m2(b.separation[i]) * airmass2) /
                  static_cast<double>(sky.nights.size());
    }
    const StructureFunctionEstimate r =
        bin_structure_function(radiometer_structure_function(night, sky.paths[n]), 6.0);
    std::cout << "night " << n << ": W from true paths "
              << fit_slab_thickness(b.separation, b.value_m2).thickness_m << " m, retrieved "
              << fit_slab_thickness(r.separation, r.value_m2).thickness_m << " m\n";
  }
  // Expected ratio: D - Var(mean of L_b - L_a over the night), with frozen flow at 4 s steps:
  // Var(mean) = sum_k (N - |k|) C(k) / N^2, C(k) = (D(s_k + d) + D(s_k - d)) / 2 - D(s_k).
  const auto& position = sky.nights[0].array.position_enu_m;
  const int samples = static_cast<int>(sky.paths[0].time_s.size());
  const auto d_of = [&](double x, double y) {
    const double r = std::hypot(x, y);
    return r > 0.0 ? spectrum.structure_function_m2(r) : 0.0;
  };
  std::vector<double> expected(bins.size(), 0.0), in_bin(bins.size(), 0.0);
  for (std::size_t a = 0; a < position.size(); ++a) {
    for (std::size_t b = a + 1; b < position.size(); ++b) {
      const double dx = position[b][0] - position[a][0], dy = position[b][1] - position[a][1];
      double var_mean = 0.0;
      for (int k = 1 - samples; k < samples; ++k) {
        const double sx = 8.0 * 4.0 * k, sy = 3.0 * 4.0 * k;
        var_mean += (samples - std::abs(k)) *
                    (0.5 * (d_of(sx + dx, sy + dy) + d_of(sx - dx, sy - dy)) - d_of(sx, sy));
      }
      var_mean /= static_cast<double>(samples) * samples;
      const double d = std::hypot(dx, dy);
      std::size_t nearest = 0;
      for (std::size_t i = 0; i < bins.size(); ++i)
        if (std::abs(std::log(d / bins[i])) < std::abs(std::log(d / bins[nearest]))) nearest = i;
      expected[nearest] += 1.0 - var_mean / d_of(dx, dy);
      in_bin[nearest] += 1.0;
    }
  }
  std::vector<double> theory, times_observed, times_expected;
  std::cout << "bin (m), observed / theory, expected from the night's mean:\n";
  for (std::size_t i = 0; i < bins.size(); ++i) {
    expected[i] /= in_bin[i];
    theory.push_back(spectrum.structure_function_m2(bins[i]));
    times_observed.push_back(theory.back() * ratio[i]);
    times_expected.push_back(theory.back() * expected[i]);
    std::cout << "   " << bins[i] << " " << ratio[i] << " " << expected[i] << "\n";
  }
  const StructureFunctionEstimate pooled = bin_structure_function(pooled_truth, 6.0);
  std::cout << "theory at the bins: " << fit_slab_thickness(bins, theory).brief_report()
            << "\ntheory x observed ratio: "
            << fit_slab_thickness(bins, times_observed).brief_report()
            << "\ntheory x expected ratio: "
            << fit_slab_thickness(bins, times_expected).brief_report()
            << "\ntwelve nights pooled (true paths): "
            << fit_slab_thickness(pooled.separation, pooled.value_m2).brief_report() << "\n";
}

TEST(StructureFunctionNight, SlabFitFindsTheThicknessWithinItsStatedInterval) {
  // Baselines 40 m - 2.5 km span the transition of W = 600 m and 300 m (neither regime is
  // reached). Six one-hour nights of each, pooled, and each night alone. Tolerances from the
  // spread measured in DISABLED_SlabThicknessSpreadOverSeeds.
  std::vector<double> single_pulls;
  for (const auto& [w, first_seed] : {std::pair{600.0, 3000}, std::pair{300.0, 4000}}) {
    const LayerNights sky = layer_nights(w, static_cast<std::uint64_t>(first_seed), 6);
    const NightSlabThickness pooled = pooled_slab_thickness(sky.nights, sky.paths, {}, 6.0, 24);
    std::cout << "W = " << w << " m, six nights pooled: " << pooled.brief_report() << "\n";
    ASSERT_TRUE(pooled.fit.ok()) << pooled.brief_report();
    ASSERT_EQ(pooled.fit.constraint, ThicknessConstraint::kMeasured) << pooled.brief_report();
    // (a) Pooled sets scatter by sd 0.11-0.13 in ln W about a mean of +0.09 (600 m) and -0.02
    // (300 m): allowed 2.5 sd = 0.3 (measured here +0.18 and -0.07; a W 20 % high fails).
    EXPECT_LT(std::abs(std::log(pooled.fit.thickness_m / w)), 0.3) << pooled.brief_report();
    // (b) The truth within the stated interval: pooled pulls had rms 0.59-0.79, largest 1.1
    // (measured here 0.63 and -0.59); the points' interval alone gave 21.6 and -2.1.
    EXPECT_LT(std::abs(slab_pull(pooled.fit, w)), 2.5) << pooled.brief_report();
    // The stated interval is the wider of the jackknife and the profile on each side.
    EXPECT_NEAR(pooled.fit.thickness_low_m, std::min(pooled.profile_low_m, pooled.jackknife_low_m),
                1e-9 * w);
    EXPECT_NEAR(pooled.fit.thickness_high_m,
                std::max(pooled.profile_high_m, pooled.jackknife_high_m), 1e-9 * w);
    EXPECT_EQ(pooled.segment_thickness_m.size() + pooled.segments_dropped, 24u);
    for (std::size_t i = 0; i < sky.nights.size(); ++i) {
      const NightSlabThickness one = night_slab_thickness(sky.nights[i], sky.paths[i], {}, 6.0);
      if (one.fit.constraint != ThicknessConstraint::kMeasured) continue;
      single_pulls.push_back(slab_pull(one.fit, w));
      std::cout << "   night " << i << ": " << one.brief_report() << ", pull "
                << single_pulls.back() << "\n";
    }
  }
  // Two nights on which a jackknife over quarters collapsed (sigma ln W 0.02 and 0.07 while
  // 0.38 and 0.44 off the truth): with 12 segments their pulls were -1.7 and -2.0.
  const LayerNights hard_600 = layer_nights(600.0, 3007, 1);
  const LayerNights hard_600b = layer_nights(600.0, 3016, 1);
  for (const LayerNights* sky : {&hard_600, &hard_600b}) {
    const NightSlabThickness one = night_slab_thickness(sky->nights[0], sky->paths[0], {}, 6.0);
    ASSERT_EQ(one.fit.constraint, ThicknessConstraint::kMeasured) << one.brief_report();
    single_pulls.push_back(slab_pull(one.fit, 600.0));
    std::cout << "   hard night: " << one.brief_report() << ", pull " << single_pulls.back()
              << "\n";
  }
  // Single nights: over 48 seeds the pulls had rms 0.96-0.97 and none beyond 2.0 (measured
  // here rms 1.0 over 14); allowed rms 1.5 and 3 for any night.
  ASSERT_GE(single_pulls.size(), 12u);
  double pull2 = 0.0;
  for (double p : single_pulls) {
    EXPECT_LT(std::abs(p), 3.0);
    pull2 += p * p;
  }
  const double pull_rms = std::sqrt(pull2 / static_cast<double>(single_pulls.size()));
  std::cout << "single-night pull rms " << pull_rms << " over " << single_pulls.size() << "\n";
  EXPECT_LT(pull_rms, 1.5);
}

TEST(StructureFunctionNight, RadiometerNoiseFloorIsSubtracted) {
  // A quiet sky (30 um rms on 1 km): on short baselines the radiometer noise (~5 um per
  // sample and antenna) dominates Var(L_b - L_a) and flattens the slope towards 0.
  const std::string text = layer_night(20000.0, 8.0, 3.0, 77, 20, 3600.0, 2.0, 30.0);
  const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
  const Night night = simulate_night(scenario);
  const NightRetrieval retrieval = retrieve_night(night, scenario.site.parameters);
  const AntennaPaths paths =
      compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
  AntennaPaths truth = paths;
  for (std::size_t i = 0; i < truth.path_mm.size(); ++i)
    truth.path_mm[i] = night.truth->wet_path_m[i] * 1e3;
  SpatialStructureOptions options;
  options.antenna_path_noise_mm = antenna_path_noise_mm(retrieval);
  ASSERT_EQ(options.antenna_path_noise_mm.size(), night.antenna_count());
  for (double s : options.antenna_path_noise_mm) EXPECT_GT(s, 0.0);
  const SpatialStructureResult raw_sf = radiometer_structure_function(night, paths);
  const SpatialStructureResult clean_sf = radiometer_structure_function(night, paths, options);
  const StructureFunctionEstimate raw = bin_structure_function(raw_sf, 6.0);
  const StructureFunctionEstimate clean = bin_structure_function(clean_sf, 6.0);
  const StructureFunctionEstimate exact =
      bin_structure_function(radiometer_structure_function(night, truth), 6.0);
  ASSERT_EQ(clean.separation.size(), exact.separation.size());
  for (std::size_t i = 0; i < clean.separation.size(); ++i) {
    if (clean.separation[i] < 60.0) continue;  // the shortest bin: noise 10x the signal
    EXPECT_NEAR(clean.value_m2[i] / exact.value_m2[i], 1.0, 0.2) << clean.separation[i] << " m";
  }
  EXPECT_GT(raw_sf.baselines[0].structure_m2, 3.0 * clean_sf.baselines[0].structure_m2);
  EXPECT_GT(clean_sf.baselines[0].noise_m2, 0.0);
  const BrokenPowerLawFit raw_fit = fit_broken_power_law(raw.separation, raw.value_m2);
  const BrokenPowerLawFit clean_fit = fit_broken_power_law(clean.separation, clean.value_m2);
  const BrokenPowerLawFit exact_fit = fit_broken_power_law(exact.separation, exact.value_m2);
  std::cout << "noise kept:       " << raw_fit.brief_report()
            << "\nnoise subtracted: " << clean_fit.brief_report()
            << "\ntrue paths:       " << exact_fit.brief_report() << "\n";
  EXPECT_LT(raw_fit.alpha_short, 1.0);
  EXPECT_NEAR(clean_fit.alpha_short, exact_fit.alpha_short, 0.1);
  // Wrong lengths and negative noise are refused.
  options.antenna_path_noise_mm.pop_back();
  EXPECT_THROW(radiometer_structure_function(night, paths, options), InvalidInput);
  options.antenna_path_noise_mm.assign(night.antenna_count(), -1.0);
  EXPECT_THROW(radiometer_structure_function(night, paths, options), InvalidInput);
  options.antenna_path_noise_mm.assign(night.antenna_count(),
                                       std::numeric_limits<double>::infinity());
  EXPECT_THROW(radiometer_structure_function(night, paths, options), InvalidInput);
  options.antenna_path_noise_mm.assign(night.antenna_count(), std::nan(""));  // unknown: kept
  EXPECT_NEAR(radiometer_structure_function(night, paths, options).baselines[0].structure_m2,
              raw_sf.baselines[0].structure_m2, 1e-20);
}

Night wind_night(double east_m_s, double north_m_s, std::uint64_t seed, AntennaPaths* paths) {
  const std::string text = layer_night(1000.0, east_m_s, north_m_s, seed, 10, 1200.0, 1.0);
  const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
  Night night = simulate_night(scenario);
  *paths = retrieved_paths(night, scenario);
  return night;
}

TEST(StructureFunctionNight, WindSpeedAndDirectionAreRecovered) {
  const std::vector<std::array<double, 2>> winds = {{8.0, 3.0}, {-5.0, 6.0}, {2.0, -12.0}};
  std::uint64_t seed = 20;
  for (const auto& w : winds) {
    AntennaPaths paths;
    const Night night = wind_night(w[0], w[1], seed++, &paths);
    const WindEstimate wind = estimate_wind(night, paths);
    ASSERT_TRUE(wind.ok()) << wind.brief_report();
    const double speed = std::hypot(w[0], w[1]);
    const double towards = std::atan2(w[0], w[1]) * 180.0 / std::numbers::pi;
    double diff = std::fmod(wind.direction_to_deg - towards + 540.0, 360.0) - 180.0;
    EXPECT_NEAR(wind.speed_m_s / speed, 1.0, 0.1) << wind.brief_report();
    EXPECT_LT(std::abs(diff), 15.0) << wind.brief_report();
    EXPECT_GE(wind.pairs_used, 5u);
    EXPECT_GT(wind.speed_sigma_m_s, 0.0);
    std::cout << "wind (" << w[0] << ", " << w[1] << ") m/s = " << speed << " m/s towards "
              << towards << " deg: " << wind.brief_report() << "\n";
  }
}

TEST(StructureFunctionNight, LongNightsAreSearchedCoarseThenFine) {
  // 2.5 h at 1 s: the lag search runs on 2-sample block means first, then at full resolution.
  const std::string text = layer_night(1000.0, -6.0, 4.0, 40, 10, 9000.0, 1.0);
  const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
  const Night night = simulate_night(scenario);
  const AntennaPaths paths = retrieved_paths(night, scenario);
  const WindEstimate wind = estimate_wind(night, paths);
  ASSERT_TRUE(wind.ok()) << wind.brief_report();
  const double towards = std::atan2(-6.0, 4.0) * 180.0 / std::numbers::pi;
  const double diff = std::fmod(wind.direction_to_deg - towards + 540.0, 360.0) - 180.0;
  EXPECT_NEAR(wind.speed_m_s / std::hypot(-6.0, 4.0), 1.0, 0.1) << wind.brief_report();
  EXPECT_LT(std::abs(diff), 15.0) << wind.brief_report();
  std::cout << "long night: " << wind.brief_report() << "\n";
  // Blocks of 8 samples against the full-resolution search: the same peaks.
  WindOptions coarse, full;
  coarse.coarse_search_points = 1100;
  full.coarse_search_points = 1'000'000;
  const WindEstimate w8 = estimate_wind(night, paths, coarse);
  const WindEstimate w1 = estimate_wind(night, paths, full);
  ASSERT_TRUE(w8.ok() && w1.ok());
  ASSERT_EQ(w8.pairs.size(), w1.pairs.size());
  std::size_t compared = 0;
  for (std::size_t i = 0; i < w1.pairs.size(); ++i) {
    if (!w1.pairs[i].used) continue;
    EXPECT_NEAR(w8.pairs[i].lag_s, w1.pairs[i].lag_s, 1e-9) << "pair " << i;
    ++compared;
  }
  EXPECT_GE(compared, 5u);
  EXPECT_NEAR(w8.speed_m_s, w1.speed_m_s, 1e-9);
  WindOptions bad;
  bad.coarse_search_points = 3;
  EXPECT_THROW(estimate_wind(night, paths, bad), InvalidInput);
}

TEST(StructureFunctionNight, WindPairsDoNotDependOnThreadsOrOnHowGapsAreSummed) {
  AntennaPaths paths;
  const Night night = wind_night(7.0, -4.0, 61, &paths);
  // Gaps: every antenna loses a different stretch, one loses every third sample.
  const std::size_t nt = paths.time_s.size();
  for (std::size_t a = 0; a < paths.antennas; ++a)
    for (std::size_t k = 100 + 37 * a; k < 160 + 37 * a && k < nt; ++k)
      paths.path_mm[a * nt + k] = std::nan("");
  for (std::size_t k = 0; k < nt; k += 3) paths.path_mm[2 * nt + k] = std::nan("");
  WindOptions one, two, many;
  one.threads = 1;
  two.threads = 2;
  many.threads = 7;
  const WindEstimate w1 = estimate_wind(night, paths, one);
  const WindEstimate w2 = estimate_wind(night, paths, two);
  const WindEstimate w7 = estimate_wind(night, paths, many);
  ASSERT_TRUE(w1.ok()) << w1.brief_report();
  ASSERT_EQ(w1.pairs.size(), w2.pairs.size());
  ASSERT_EQ(w1.pairs.size(), w7.pairs.size());
  for (std::size_t i = 0; i < w1.pairs.size(); ++i) {
    EXPECT_EQ(w1.pairs[i].lag_s, w2.pairs[i].lag_s) << "pair " << i;
    EXPECT_EQ(w1.pairs[i].lag_s, w7.pairs[i].lag_s) << "pair " << i;
    EXPECT_EQ(w1.pairs[i].used, w7.pairs[i].used) << "pair " << i;
  }
  EXPECT_EQ(w1.speed_m_s, w7.speed_m_s);
  // Each used pair's lag maximises the plain gap-skipping correlation of the high-passed
  // series (written out here without masks or vector lanes) over whole-sample lags.
  const std::size_t half = 60;  // highpass_window_s 120 s at 1 s
  auto highpassed = [&](std::size_t a) {
    std::vector<double> out(nt, std::nan(""));
    for (std::size_t i = 0; i < nt; ++i) {
      if (!std::isfinite(paths.path_mm[a * nt + i])) continue;
      double sum = 0.0;
      std::size_t n = 0;
      for (std::size_t j = i >= half ? i - half : 0; j < std::min(nt, i + half + 1); ++j) {
        if (!std::isfinite(paths.path_mm[a * nt + j])) continue;
        sum += paths.path_mm[a * nt + j];
        ++n;
      }
      out[i] = paths.path_mm[a * nt + i] - sum / static_cast<double>(n);
    }
    return out;
  };
  auto plain_correlation = [&](const std::vector<double>& x, const std::vector<double>& y,
                               long lag) {
    double sxy = 0.0, sxx = 0.0, syy = 0.0;
    for (long t = std::max(0L, -lag);
         t < std::min<long>(static_cast<long>(nt), static_cast<long>(nt) - lag); ++t) {
      const double u = x[static_cast<std::size_t>(t)], v = y[static_cast<std::size_t>(t + lag)];
      if (std::isnan(u) || std::isnan(v)) continue;
      sxy += u * v;
      sxx += u * u;
      syy += v * v;
    }
    return sxy / std::sqrt(sxx * syy);
  };
  std::size_t checked = 0;
  for (const PairLag& p : w1.pairs) {
    if (!p.used) continue;
    const std::vector<double> x = highpassed(static_cast<std::size_t>(p.antenna_a));
    const std::vector<double> y = highpassed(static_cast<std::size_t>(p.antenna_b));
    const long peak = std::lround(p.lag_s);  // refined by a parabola within half a sample
    const double at_peak = plain_correlation(x, y, peak);
    EXPECT_NEAR(at_peak, p.peak_correlation, 1e-9) << p.antenna_a << "-" << p.antenna_b;
    EXPECT_GE(at_peak, plain_correlation(x, y, peak - 1)) << p.antenna_a << "-" << p.antenna_b;
    EXPECT_GE(at_peak, plain_correlation(x, y, peak + 1)) << p.antenna_a << "-" << p.antenna_b;
    ++checked;
  }
  EXPECT_GE(checked, 5u);
  WindOptions bad;
  bad.threads = -1;
  EXPECT_THROW(estimate_wind(night, paths, bad), InvalidInput);
}

// Per lag: the antennas' mean temporal D(tau) of a wind_night over the frozen-flow theory,
// the spatial D at |v| tau times the airmass squared (the slant path is longer than the
// zenith one by the airmass).
std::vector<double> temporal_ratios(const Night& night,
                                    const TemporalStructureResult& antenna,
                                    const std::vector<double>& lags) {
  const LayerSpectrum spectrum(TurbulentLayer{600.0, 1000.0, 200000.0, 8.0, 3.0, 500e-6, 1000.0});
  const double airmass = 1.0 / std::sin(night.pointing.elevation_deg[0] * std::numbers::pi / 180.0);
  std::vector<double> ratio;
  for (std::size_t i = 0; i < lags.size(); ++i) {
    double mean = 0.0;
    for (const auto& e : antenna.estimates)
      mean += e.value_m2[i] / static_cast<double>(antenna.estimates.size());
    const double expected = spectrum.structure_function_m2(std::hypot(8.0, 3.0) * lags[i]);
    ratio.push_back(mean / (expected * airmass * airmass));
  }
  return ratio;
}

TEST(StructureFunctionNight, TemporalStructureFollowsFrozenFlow) {
  // D(tau) of one antenna's path equals the spatial D at |v| tau (Taylor).
  AntennaPaths paths;
  const Night night = wind_night(8.0, 3.0, 30, &paths);
  const std::vector<double> lags = {2.0, 5.0, 10.0, 20.0};
  const std::vector<std::array<int, 2>> pairs = {{0, 1}};
  const TemporalStructureResult antenna = temporal_path_structure(paths, lags);
  const TemporalStructureResult baseline = temporal_path_structure(paths, lags, pairs);
  ASSERT_TRUE(antenna.ok()) << antenna.brief_report();
  ASSERT_TRUE(baseline.ok());
  EXPECT_EQ(antenna.estimates.size(), night.antenna_count());
  EXPECT_EQ(baseline.series[0][1], 1);
  EXPECT_NEAR(antenna.sample_interval_s, 1.0, 1e-9);
  EXPECT_THROW(temporal_path_structure(paths, std::vector<double>{1e7}), InvalidInput);

  // The ratio to theory scatters from night to night (few independent screen patches pass in
  // 20 minutes). Over seeds 30-49 (DISABLED_TemporalStructureSpreadOverSeeds) it measured, at
  // lags 2, 5, 10, 20 s: mean 0.964, 0.977, 0.981, 0.991; standard deviation per night 0.049,
  // 0.067, 0.089, 0.124 (single nights 0.74-1.25). The mean over three nights (seeds 30-32)
  // is allowed three standard deviations of a three-night mean plus the measured offset from
  // one (the 1 s integration smooths the shortest lags): 0.12, 0.14, 0.17, 0.22. A path
  // amplitude 10 % off (D 21 % off) fails at the short lags.
  const double sigma[] = {0.049, 0.067, 0.089, 0.124};
  const double offset[] = {0.036, 0.023, 0.019, 0.009};
  std::vector<double> sum = temporal_ratios(night, antenna, lags);
  for (std::uint64_t seed : {31, 32}) {
    AntennaPaths more_paths;
    const Night more = wind_night(8.0, 3.0, seed, &more_paths);
    const std::vector<double> r =
        temporal_ratios(more, temporal_path_structure(more_paths, lags), lags);
    for (std::size_t i = 0; i < lags.size(); ++i) sum[i] += r[i];
  }
  for (std::size_t i = 0; i < lags.size(); ++i) {
    const double mean = sum[i] / 3.0;
    std::cout << "lag " << lags[i] << " s: D / theory over 3 nights " << mean << "\n";
    EXPECT_NEAR(mean, 1.0, 3.0 * sigma[i] / std::sqrt(3.0) + offset[i]) << "lag " << lags[i];
  }
}

// The spread over seeds of the ratios checked above (run with --gtest_also_run_disabled_tests).
TEST(StructureFunctionNight, DISABLED_TemporalStructureSpreadOverSeeds) {
  const std::vector<double> lags = {2.0, 5.0, 10.0, 20.0};
  for (std::uint64_t seed = 30; seed < 50; ++seed) {
    AntennaPaths paths;
    const Night night = wind_night(8.0, 3.0, seed, &paths);
    std::cout << "seed " << seed << ":";
    for (double r : temporal_ratios(night, temporal_path_structure(paths, lags), lags))
      std::cout << " " << r;
    std::cout << "\n";
  }
}

TEST(StructureFunctionNight, CalibratorStructureIsInPathUnitsAndCappedByTheScan) {
  AntennaPaths paths;
  const Night night = wind_night(8.0, 3.0, 31, &paths);
  const SpatialStructureResult cal =
      calibrator_structure_function(night, night.calibrator_phases.phase_rad);
  ASSERT_TRUE(cal.ok()) << cal.brief_report();
  EXPECT_EQ(cal.baselines.size(), night.antenna_count() - 1);  // baselines to antenna 0
  // Path units: the same phases at twice the frequency are half the path. A constant phase
  // offset (wrapped) leaves the wrap-aware deviations alone.
  Night shifted = night;
  for (std::size_t k = 0; k < shifted.calibrator_phases.phase_rad.size(); ++k) {
    shifted.calibrator_phases.freq_ghz[k] *= 2.0;
    shifted.calibrator_phases.phase_rad[k] =
        std::remainder(night.calibrator_phases.phase_rad[k] + 2.5, 2.0 * std::numbers::pi);
  }
  const SpatialStructureResult cal2 =
      calibrator_structure_function(shifted, shifted.calibrator_phases.phase_rad);
  ASSERT_EQ(cal2.baselines.size(), cal.baselines.size());
  const SpatialStructureResult rad = radiometer_structure_function(night, paths);
  for (std::size_t i = 0; i < cal.baselines.size(); ++i) {
    EXPECT_NEAR(cal2.baselines[i].structure_m2 / cal.baselines[i].structure_m2, 0.25, 1e-9);
    // Within 120 s scans the screen moves ~1 km: long baselines see less than the full D.
    if (cal.baselines[i].baseline_m > 1500.0) {
      for (const BaselineStructure& r : rad.baselines) {
        if (r.antenna_a == cal.baselines[i].antenna_a &&
            r.antenna_b == cal.baselines[i].antenna_b) {
          EXPECT_LT(cal.baselines[i].structure_m2, r.structure_m2);
        }
      }
    }
  }
}

TEST(StructureFunctionNight, JackknifeGivesTheNightsOwnSpread) {
  // One hour over a 600 m layer: W is measured, and the refits without each twelfth of the
  // night scatter about it.
  const std::string text = layer_night(600.0, 8.0, 3.0, 3000, 20, 3600.0, 4.0);
  const Scenario scenario = parse_scenario(text, "test.toml", test::testdata(""));
  const Night night = simulate_night(scenario);
  const AntennaPaths paths = retrieved_paths(night, scenario);
  const NightSlabThickness slab = night_slab_thickness(night, paths);
  std::cout << slab.brief_report() << "\n";
  ASSERT_EQ(slab.fit.constraint, ThicknessConstraint::kMeasured) << slab.brief_report();
  ASSERT_EQ(slab.segment_thickness_m.size() + slab.segments_dropped, 12u);
  ASSERT_GE(slab.segment_thickness_m.size(), 2u);
  ASSERT_TRUE(std::isfinite(slab.log_thickness_sigma)) << slab.brief_report();
  EXPECT_GT(slab.log_thickness_sigma, 0.0);
  // The jackknife formula: sqrt((K - 1) / K sum (ln W_k - mean)^2).
  const double k = static_cast<double>(slab.segment_thickness_m.size());
  double mean = 0.0, spread = 0.0;
  for (double w : slab.segment_thickness_m) mean += std::log(w) / k;
  for (double w : slab.segment_thickness_m) spread += std::pow(std::log(w) - mean, 2);
  EXPECT_NEAR(slab.log_thickness_sigma, std::sqrt(spread * (k - 1.0) / k), 1e-12);
  EXPECT_NEAR(slab.jackknife_high_m / slab.fit.thickness_m, std::exp(slab.log_thickness_sigma),
              1e-9);
  // The night's own error is wider than the scatter of its points about the model, and the
  // stated interval is the wider of the two.
  EXPECT_GT(slab.jackknife_high_m - slab.jackknife_low_m, slab.profile_high_m - slab.profile_low_m);
  EXPECT_NEAR(slab.fit.thickness_low_m, std::min(slab.jackknife_low_m, slab.profile_low_m), 1e-9);
  EXPECT_NEAR(slab.fit.thickness_high_m, std::max(slab.jackknife_high_m, slab.profile_high_m),
              1e-9);
  EXPECT_THROW(night_slab_thickness(night, paths, {}, 5.0, 1), InvalidInput);
  EXPECT_THROW(night_slab_thickness(night, paths, {}, 5.0, 101), InvalidInput);
  // Pooled nights: bad group counts, no nights, or a paths list of another length.
  const std::vector<Night> two_nights = {night, night};
  const std::vector<AntennaPaths> one_paths = {paths};
  EXPECT_THROW(pooled_slab_thickness(two_nights, one_paths), InvalidInput);
  EXPECT_THROW(pooled_slab_thickness({}, {}), InvalidInput);
  EXPECT_THROW(
      pooled_slab_thickness(two_nights, std::vector<AntennaPaths>{paths, paths}, {}, 5.0, 1),
      InvalidInput);
  // One night pooled with itself: the same points twice, so the same fit; each of its two
  // groups is one copy, whose removal leaves the other, so both refits equal the full fit.
  const NightSlabThickness twice =
      pooled_slab_thickness(two_nights, std::vector<AntennaPaths>{paths, paths}, {}, 5.0, 2);
  EXPECT_NEAR(twice.fit.thickness_m, slab.fit.thickness_m, 1e-6 * slab.fit.thickness_m);
  ASSERT_EQ(twice.segment_thickness_m.size(), 2u);
  EXPECT_NEAR(twice.segment_thickness_m[0], slab.fit.thickness_m, 1e-6 * slab.fit.thickness_m);
  EXPECT_NEAR(twice.log_thickness_sigma, 0.0, 1e-9);
  // A limit has no jackknife; nothing at all neither.
  AntennaPaths short_paths;
  const Night short_night = wind_night(8.0, 3.0, 33, &short_paths);
  const NightSlabThickness limit = night_slab_thickness(short_night, short_paths);
  if (limit.fit.constraint != ThicknessConstraint::kMeasured) {
    EXPECT_TRUE(limit.segment_thickness_m.empty());
    EXPECT_TRUE(std::isnan(limit.log_thickness_sigma));
  }
  AntennaPaths nan_paths = paths;
  std::fill(nan_paths.path_mm.begin(), nan_paths.path_mm.end(), std::nan(""));
  const NightSlabThickness none = night_slab_thickness(night, nan_paths);
  EXPECT_EQ(none.fit.status, DiagnosticStatus::kNoData);
  EXPECT_TRUE(none.segment_thickness_m.empty());
}

TEST(StructureFunctionNight, BadInputGivesAStatusOrThrows) {
  AntennaPaths paths;
  const Night night = wind_night(8.0, 3.0, 32, &paths);
  // No calibrator scans.
  Night no_scans = night;
  no_scans.scans.clear();
  const SpatialStructureResult none =
      calibrator_structure_function(no_scans, no_scans.calibrator_phases.phase_rad);
  EXPECT_EQ(none.status, DiagnosticStatus::kNoData);
  EXPECT_NE(none.message.find("no calibrator scans"), std::string::npos);
  // All-NaN paths.
  AntennaPaths nan_paths = paths;
  std::fill(nan_paths.path_mm.begin(), nan_paths.path_mm.end(), std::nan(""));
  const SpatialStructureResult nan_sf = radiometer_structure_function(night, nan_paths);
  EXPECT_EQ(nan_sf.status, DiagnosticStatus::kNoData) << nan_sf.brief_report();
  const WindEstimate nan_wind = estimate_wind(night, nan_paths);
  EXPECT_EQ(nan_wind.status, DiagnosticStatus::kNoData) << nan_wind.brief_report();
  const std::vector<double> lags = {2.0};
  EXPECT_EQ(temporal_path_structure(nan_paths, lags).status, DiagnosticStatus::kNoData);
  // A single antenna.
  Night one = night;
  one.array.antenna_names.resize(1);
  one.array.position_enu_m.resize(1);
  AntennaPaths one_paths = paths;
  one_paths.antennas = 1;
  one_paths.path_mm.resize(paths.time_s.size());
  EXPECT_EQ(radiometer_structure_function(one, one_paths).status, DiagnosticStatus::kNoData);
  EXPECT_EQ(estimate_wind(one, one_paths).status, DiagnosticStatus::kNoData);
  EXPECT_EQ(calibrator_structure_function(one, one.calibrator_phases.phase_rad).status,
            DiagnosticStatus::kNoData);
  // Shapes and options.
  EXPECT_THROW(radiometer_structure_function(one, paths), InvalidInput);
  EXPECT_THROW(calibrator_structure_function(night, lags), InvalidInput);
  SpatialStructureOptions bad_sf;
  bad_sf.window_s = -1.0;
  EXPECT_THROW(radiometer_structure_function(night, paths, bad_sf), InvalidInput);
  WindOptions bad_wind;
  bad_wind.min_speed_m_s = 0.0;
  EXPECT_THROW(estimate_wind(night, paths, bad_wind), InvalidInput);
  bad_wind = {};
  bad_wind.max_baseline_m = -5.0;
  EXPECT_THROW(estimate_wind(night, paths, bad_wind), InvalidInput);
}
}  // namespace
}  // namespace wvr
