// Radiometer cross-calibration on a simulated two-hour night with known per-unit offsets and
// gains (applied here to the simulated brightness) and one unit whose gain drifts (the
// simulator's gain_drift fault).
#include "wvr/radiometer_cross_calibration.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <iostream>

#include "crosscal/cross_calibration_night.hpp"
#include "test_util.hpp"
#include "wvr/error.hpp"
#include "wvr/scenario.hpp"
#include "wvr/simulator.hpp"

namespace wvr {
namespace {

// Two hours through transit (elevation up and down) with PWV drifting: the array's sky covers a
// range that is not monotonic in time, which is what separates a gain from an offset and both
// from a drift. A compact array (200 m radius) under a 100 um wet screen: the turbulent column
// differences between antennas set the floor (see the header; on a 600 m radius under 200 um
// the same night gives 5.4 K and 2.8 %).
const std::string kNight = test::kCrossCalibrationNight + R"(
[[faults]]
antenna = 2
kind = "spike"
start_s = 1000.0
stop_s = 3000.0
magnitude = 8.0
[[faults]]
antenna = 5
kind = "gain_drift"
start_s = 0.0
stop_s = 7200.0
magnitude = 0.01
)";

constexpr std::size_t kDriftingUnit = 5;
constexpr double kDriftPerHour = 0.01;

struct Injected {
  std::vector<double> offset_k;  // [antenna, channel], relative to the array
  std::vector<double> gain;      // [antenna, channel], relative to the array
};

// Injects o + g T per unit and channel and returns the values the solution should find:
// relative to the array's mean (y = o + g S  <=>  y = o' + g' S' with g' = g / mean g,
// o' = o - mean(o) g / mean g). The drifting unit's effective gain is its value at the
// night's mid-time, g (1 + m * 1 h).
Injected inject(Night& night) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  std::vector<double> offset(na * nc), gain(na * nc);
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t c = 0; c < nc; ++c) {
      // Deterministic spread below the disagreement limits: offsets within +/- 1.2 K, gains
      // within +/- 2.5 % (invented).
      const double ac = static_cast<double>(a), cc = static_cast<double>(c);
      offset[a * nc + c] = 1.2 * std::sin(1.7 * ac + 0.9 * cc);
      gain[a * nc + c] = 1.0 + 0.025 * std::cos(2.3 * ac + 1.3 * cc);
      for (std::size_t k = 0; k < nt; ++k) {
        double& v = night.radiometer.brightness_k[(a * nt + k) * nc + c];
        v = offset[a * nc + c] + gain[a * nc + c] * v;
      }
    }
  }
  const double mid_h =
      0.5 * (night.radiometer.time_s.front() + night.radiometer.time_s.back()) / 3600.0;
  Injected truth{std::vector<double>(na * nc), std::vector<double>(na * nc)};
  for (std::size_t c = 0; c < nc; ++c) {
    double mean_offset = 0.0, mean_gain = 0.0;
    std::vector<double> effective_gain(na);
    // The array's reference leaves the drifting unit out.
    const double references = static_cast<double>(na - 1);
    for (std::size_t a = 0; a < na; ++a) {
      effective_gain[a] =
          gain[a * nc + c] * (a == kDriftingUnit ? 1.0 + kDriftPerHour * mid_h : 1.0);
      if (a == kDriftingUnit) continue;
      mean_offset += offset[a * nc + c] / references;
      mean_gain += effective_gain[a] / references;
    }
    for (std::size_t a = 0; a < na; ++a) {
      truth.gain[a * nc + c] = effective_gain[a] / mean_gain;
      truth.offset_k[a * nc + c] = offset[a * nc + c] - mean_offset * truth.gain[a * nc + c];
    }
  }
  return truth;
}

struct Fixture {
  Night night;
  Injected truth;
};

const Fixture& fixture() {
  static const Fixture f = [] {
    Fixture x;
    x.night = simulate_night(parse_scenario(kNight, "crosscal.toml", test::testdata("")));
    x.truth = inject(x.night);
    return x;
  }();
  return f;
}

TEST(RadiometerCrossCalibration, RecoversInjectedOffsetsAndGainsOnATwoHourNight) {
  const Fixture& f = fixture();
  const CrossCalibration x = cross_calibrate(f.night);
  const std::size_t nc = f.night.channel_count();
  double worst_offset = 0.0, worst_gain = 0.0;
  for (std::size_t a = 0; a < f.night.antenna_count(); ++a) {
    // The drifting unit is named (next test); its mid-night values are not a calibration.
    if (a == kDriftingUnit) continue;
    for (std::size_t c = 0; c < nc; ++c) {
      const ChannelCalibration& cal = x.units[a].channels[c];
      ASSERT_TRUE(cal.solved) << a << " " << c;
      worst_offset = std::max(worst_offset, std::abs(cal.offset_k - f.truth.offset_k[a * nc + c]));
      worst_gain = std::max(worst_gain, std::abs(cal.gain - f.truth.gain[a * nc + c]));
      EXPECT_GT(cal.offset_sigma_k, 0.0);
      EXPECT_GT(cal.gain_sigma, 0.0);
    }
  }
  std::cout << "worst offset error " << worst_offset << " K, worst gain error " << worst_gain
            << "\n";
  EXPECT_LT(worst_offset, 0.2);  // the project's requirement for cross-calibration
  EXPECT_LT(worst_gain, 0.005);
}

TEST(RadiometerCrossCalibration, NamesTheDriftingUnitAndNoOther) {
  const Fixture& f = fixture();
  const CrossCalibration x = cross_calibrate(f.night);
  for (std::size_t a = 0; a < f.night.antenna_count(); ++a) {
    EXPECT_EQ(x.units[a].drifting, a == kDriftingUnit) << a << ": " << x.units[a].verdict;
  }
  // The injected gain drift raises the brightness over the night; the drift chi^2 is
  // beyond the threshold in every channel.
  for (const ChannelCalibration& cal : x.units[kDriftingUnit].channels) {
    EXPECT_GT(cal.drift_change_k, 0.0);
    EXPECT_GT(cal.drift_chi2, CrossCalibrationOptions{}.drift_chi2_threshold);
  }
  EXPECT_NE(x.units[kDriftingUnit].verdict.find("drifts"), std::string::npos);
  EXPECT_NE(x.brief_report().find(f.night.array.antenna_names[kDriftingUnit]), std::string::npos);
}

TEST(RadiometerCrossCalibration, SolutionIsRelativeToTheArrayMean) {
  const CrossCalibration x = cross_calibrate(fixture().night);
  for (std::size_t c = 0; c < x.channels; ++c) {
    double offset = 0.0, gain = 0.0;
    for (const UnitCalibration& u : x.units) {
      if (u.drifting) continue;  // not part of the reference
      offset += u.channels[c].offset_k / static_cast<double>(x.antennas - 1);
      gain += u.channels[c].gain / static_cast<double>(x.antennas - 1);
    }
    EXPECT_NEAR(offset, 0.0, 1e-9);
    EXPECT_NEAR(gain, 1.0, 1e-9);
  }
}

TEST(RadiometerCrossCalibration, NamesAUnitFarFromTheArray) {
  Night night = fixture().night;
  const std::size_t nt = night.time_count(), nc = night.channel_count();
  for (std::size_t k = 0; k < nt; ++k) night.radiometer.brightness_k[(3 * nt + k) * nc + 1] += 4.0;
  const CrossCalibration x = cross_calibrate(night);
  EXPECT_TRUE(x.units[3].disagrees) << x.units[3].verdict;
  EXPECT_NE(x.units[3].verdict.find("offset"), std::string::npos);
  EXPECT_FALSE(x.units[0].disagrees) << x.units[0].verdict;
}

TEST(RadiometerCrossCalibration, AppliedSolutionPutsEveryUnitOnTheArrayScale) {
  const Fixture& f = fixture();
  const CrossCalibration x = cross_calibrate(f.night);
  const Night corrected = apply_cross_calibration(f.night, x, true);
  const CrossCalibration again = cross_calibrate(corrected);
  for (const UnitCalibration& u : again.units) {
    EXPECT_FALSE(u.drifting) << u.antenna << ": " << u.verdict;
    for (const ChannelCalibration& cal : u.channels) {
      EXPECT_NEAR(cal.offset_k, 0.0, 0.05);
      EXPECT_NEAR(cal.gain, 1.0, 1e-3);
    }
  }
  // The input is left alone.
  EXPECT_NE(corrected.radiometer.brightness_k, f.night.radiometer.brightness_k);
}

// At the mean sky: each unit's reading at the array's mean sky, o + (g - 1) mean(S), solved
// again from the corrected night, is zero; the gains are left as they were.
TEST(RadiometerCrossCalibration, AppliedAtTheMeanSkyEveryUnitReadsTheArraysMeanSky) {
  const Fixture& f = fixture();
  const CrossCalibration x = cross_calibrate(f.night);
  const Night corrected = apply_cross_calibration_at_mean_sky(f.night, x);
  const CrossCalibration again = cross_calibrate(corrected);
  const std::size_t nc = again.channels;
  double worst_k = 0.0;
  for (std::size_t c = 0; c < nc; ++c) {
    double mean_sky_k = 0.0;
    for (std::size_t b = 0; b < again.blocks; ++b) mean_sky_k += again.sky_k[b * nc + c];
    mean_sky_k /= static_cast<double>(again.blocks);
    for (std::size_t a = 0; a < again.antennas; ++a) {
      const ChannelCalibration& before = x.units[a].channels[c];
      const ChannelCalibration& after = again.units[a].channels[c];
      const double reading_k = after.offset_k + (after.gain - 1.0) * mean_sky_k;
      worst_k = std::max(worst_k, std::abs(reading_k));
      EXPECT_NEAR(after.gain, before.gain, 1e-3) << again.units[a].antenna;
    }
  }
  std::cout << "worst reading at the mean sky after the shift: " << worst_k << " K\n";
  EXPECT_LT(worst_k, 1e-3);
  CrossCalibration wrong = x;
  wrong.sky_k.pop_back();
  EXPECT_THROW(apply_cross_calibration_at_mean_sky(f.night, wrong), InvalidInput);
}

TEST(RadiometerCrossCalibration, ResultGroupHoldsTheSolution) {
  const CrossCalibration x = cross_calibrate(fixture().night);
  const ResultGroup g = cross_calibration_result_group(x);
  EXPECT_EQ(g.stage, "cross_calibration");
  const ResultDataset* offset = g.find("offset_k");
  ASSERT_NE(offset, nullptr);
  EXPECT_EQ(offset->shape, (std::vector<std::size_t>{x.antennas, x.channels}));
  EXPECT_EQ(std::get<std::vector<double>>(offset->values)[1], x.units[0].channels[1].offset_k);
}

TEST(RadiometerCrossCalibration, RejectsBadInput) {
  const Night& night = fixture().night;
  CrossCalibrationOptions options;
  options.block_s = 0.0;
  EXPECT_THROW(cross_calibrate(night, options), InvalidInput);
  options = {};
  options.block_s = 5000.0;  // two blocks over two hours
  EXPECT_THROW(cross_calibrate(night, options), InvalidInput);
  options = {};
  options.jackknife_groups = 2;
  EXPECT_THROW(cross_calibrate(night, options), InvalidInput);
  CrossCalibration x = cross_calibrate(night);
  x.channels = 2;
  EXPECT_THROW(apply_cross_calibration(night, x), InvalidInput);
  EXPECT_THROW(apply_cross_calibration_at_mean_sky(night, x), InvalidInput);
}

}  // namespace
}  // namespace wvr
