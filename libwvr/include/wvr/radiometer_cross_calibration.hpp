#pragma once
// Cross-calibration of the array's radiometers against each other.
//
// Every antenna of the array looks through nearly the same sky (the same source, the same
// elevation, vapour columns that differ by the turbulent fluctuations only). Averaged over
// blocks of a few minutes, antenna a's brightness in channel c is modelled as
//   Y_abc = o_ac + g_ac S_bc + r_abc,
// where S_bc is the array's sky brightness in block b (a free parameter per block), o the
// unit's offset (K), g its gain and r what the model leaves (turbulent differences between
// antennas, noise). With every unit free, o and g are degenerate with S (S -> g0 S + o0
// changes nothing observable), so the solution is defined RELATIVE TO THE ARRAY: the mean
// offset over the antennas is zero and the mean gain is one (over the units that do not drift,
// when at least 3 do not: a drifting unit's mid-night offset and gain are poorly separated
// from its drift on a night whose sky changes smoothly, 1-2 K and 1 % on two hours). A unit's
// absolute error is then its value here plus the array's common error, which only an absolute
// reference (sky dips, hot/cold loads) can measure.
//
// Block values are medians over the block's valid samples (spikes and dropouts do not move
// them). The fit alternates between S (per block, a weighted mean over antennas) and (o, g)
// per antenna and channel (weighted straight-line fit against S), with Huber weights on the
// block residuals (scale from their median absolute deviation) so that a disagreeing unit or a
// cloudy block does not pull the array.
//
// Uncertainties of the offsets and gains: a delete-a-group block jackknife over time
// (Quenouille-Tukey jackknife on contiguous groups of blocks; Efron and Tibshirani, An
// Introduction to the Bootstrap, 1993, ch. 11, and Kuensch, Ann. Statist. 17, 1989, for
// stationary series; references from memory). The night's blocks are cut into `jackknife_groups`
// contiguous groups, the whole solve (sky, Huber weights, column removal) is repeated without each,
// and the sigma is the jackknife spread of the replicates (kept at least at the straight-line fit's
// own value). Why not the straight-line fit's covariance alone: it takes the blocks as independent,
// but the turbulent column differences between antennas persist for minutes, so neighbouring block
// residuals are strongly correlated and those sigmas were 3-6 times too small. Measured pulls
// (recovered - injected) / sigma on ten simulated two-hour nights (seeds 101-110, 8 antennas
// within 200 m under a 100 um screen, cross_calibration_uncertainty_test): rms 5.8 (offsets) and
// 5.5 (gains) with the fit's covariance, 0.75 and 0.72 with the jackknife (single nights
// 0.2-1.3). On residuals that are an AR(1) series with a 300 s correlation time the pull rms is
// 1.4 (the fit's covariance: 3.1, as the AR(1) variance inflation sqrt((1 + rho) / (1 - rho))
// predicts): 12-minute groups are not much longer than that correlation time, and the
// jackknife has only groups - 1 degrees of freedom. The sigmas say nothing of the array's
// common error (below) and cannot see a column difference that persists over the whole night.
//
// Turbulence makes the vapour column differ between antennas, and block averages of a few
// minutes do not average it away (over a 1 km array with a 200 um path screen, 0.008 mm of PWV
// rms per 5-minute block, 0.5 K in the line channels). Such a difference moves every channel
// of a unit together along the sky's response to vapour, so it is removed block by block along
// the dominant common direction of the residuals across channels (estimated from the night;
// it changes little with airmass and PWV), with the offsets and gains refitted after each
// pass. What cannot be removed is a difference of the night-mean column between antennas
// (screen structure larger than the array that does not average out in a few hours): it is
// indistinguishable from an offset and stays in the offsets, at the scale of that difference
// times the channel's response to vapour; a column difference that follows the sky over the
// night is likewise indistinguishable from a gain common to all channels. The jackknife sigmas
// include these terms only as far as they change over the night. Measured on simulated two-hour
// nights through transit (8 antennas, 60 s blocks, radiometer_cross_calibration_test): worst errors
// 0.14 K and 0.16 % on a 200 m array under a 100 um screen (1 km rms), 5.4 K and 2.8 % on a 600 m
// array under 200 um. On a turbulent night over a wide array the result is thus a statement about
// the columns as much as about the units; compare the offsets with their change between nights.
//
// Drift: for each unit and channel the blocks are refitted with S fixed as
//   Y = o + g S + (do + dg S) tau,  tau = hours from the night's mid-time,
// and the unit drifts when (do, dg) differ from zero by more than drift_chi2_threshold (chi^2
// with 2 degrees of freedom) AND the change it implies at the array's mean sky over the night
// exceeds min_drift_k. The covariance of (do, dg) comes from the unit's residual scatter with
// the blocks taken as independent, so residuals correlated in time would inflate the chi^2;
// the column removal keeps that in check on turbulent nights (drift pulls: rms 1.0 on the ten
// nights above), and min_drift_k guards too. Units found drifting are then solved again with
// the drift terms inside the solve (so their drift does not bend the array's sky) and leave
// the array's reference.
//
// Usage:
//   wvr::CrossCalibration x = wvr::cross_calibrate(night);
//   for (const auto& u : x.units) if (u.drifting) ...;
//   wvr::Night corrected = wvr::apply_cross_calibration(night, x);

#include <cstddef>
#include <string>
#include <vector>

#include "wvr/night.hpp"

namespace wvr {

struct CrossCalibrationOptions {
  // Length of the averaging blocks (s). Short blocks give the column-difference removal many
  // samples: on the test night (compact array, 100 um screen) 60 s blocks recover offsets to
  // 0.14 K where 300 s blocks give 0.48 K.
  double block_s = 60.0;
  // A block value needs this fraction of the block's samples valid and finite.
  double min_valid_fraction = 0.5;
  double huber_k = 2.5;  // Huber threshold in units of the robust residual scale
  int max_iterations = 200;
  // A unit disagrees with the array when an offset or a gain lies further from the array
  // (0 K, gain 1) than these limits AND than 3 sigma. The limits are our choice: radiometer
  // calibration is good to about 1 K and a few per cent (common practice).
  double offset_limit_k = 1.5;
  double gain_limit = 0.03;
  // Drift tests (see above). chi^2_2 = 25 is a false-alarm probability of 4e-6 per unit and
  // channel for white block residuals.
  double drift_chi2_threshold = 25.0;
  double min_drift_k = 0.2;
  // Remove, block by block, each unit's brightness change along the channels' common
  // direction (a vapour column that differs from the array's; see the top of this file),
  // re-estimated from the residuals over `column_passes` passes of the solve.
  bool remove_column_differences = true;
  int column_passes = 6;
  // Contiguous groups of blocks for the block jackknife of the offset and gain sigmas (see
  // the top of this file); each costs one more solve.
  int jackknife_groups = 10;

  void validate() const;  // throws InvalidInput naming the field
};

// One unit's solution in one channel.
struct ChannelCalibration {
  double offset_k = 0.0, offset_sigma_k = 0.0;
  double gain = 1.0, gain_sigma = 0.0;
  double residual_rms_k = 0.0;  // rms of the block residuals after the fit
  std::size_t blocks_used = 0;
  // Linear drift over the night (per hour from mid-night) with 1-sigma uncertainties.
  double offset_drift_k_per_h = 0.0, offset_drift_sigma_k_per_h = 0.0;
  double gain_drift_per_h = 0.0, gain_drift_sigma_per_h = 0.0;
  double drift_chi2 = 0.0;      // of (offset drift, gain drift) against zero
  double drift_change_k = 0.0;  // change at the array's mean sky over the night (K)
  bool solved = false;          // false: too few blocks (values then 0 offset, gain 1)
};

struct UnitCalibration {
  std::string antenna;
  std::string radiometer_id;
  std::vector<ChannelCalibration> channels;  // [channel]
  bool disagrees = false;                    // some channel beyond the limits (see options)
  bool drifting = false;                     // some channel drifts (see the top of this file)
  std::string verdict;                       // one line: "ok", or what disagrees or drifts
};

struct CrossCalibration {
  std::size_t antennas = 0, channels = 0, blocks = 0;
  std::vector<std::string> channel_names;
  std::vector<double> block_mid_s;     // [block]
  std::vector<double> sky_k;           // [block, channel] array sky S (NaN when unsolved)
  std::vector<double> robust_scale_k;  // [channel] robust residual scale the Huber weights use
  // [channel] unit vector of the removed common direction (zeros when not removed)
  std::vector<double> column_pattern;
  double reference_time_s = 0.0;       // mid-time drifts are counted from
  std::vector<UnitCalibration> units;  // [antenna]
  std::vector<int> iterations;         // [channel]
  std::string message;                 // why a channel or the whole solve could not be done

  // Names of the units that disagree or drift.
  std::vector<std::string> flagged_units() const;
  std::string brief_report() const;
};

// Throws InvalidInput for bad options, a night with fewer than 3 antennas, or fewer than 3
// blocks. A channel with too little data leaves its units unsolved and says so in `message`.
CrossCalibration cross_calibrate(const Night& night, const CrossCalibrationOptions& options = {});

// A copy of the night with each unit's brightness mapped onto the array's scale:
// T' = (T - o(t)) / g(t), with o(t) = o + do tau and g(t) = g + dg tau for the drifting units
// when `include_drift` (their drift is part of their solve), otherwise the constant o and g
// (the drift of a unit that does not drift is noise, and poorly separated from o and g). Unsolved
// channels are left alone; the truth and results are kept. Throws InvalidInput when the calibration
// does not match the night's shape.
Night apply_cross_calibration(const Night& night,
                              const CrossCalibration& calibration,
                              bool include_drift = false);

// A copy of the night with each unit's brightness shifted by its disagreement with the array
// at the night's mean sky, T' = T - (o + (g - 1) mean(S)), per channel (unsolved channels are
// left alone). Where the sky changes little over the night, o and g are nearly degenerate (on
// the mismatched test nights, sigmas up to 125 K and 0.64 for one unit) while this combination
// is well determined: applied before retrieval it put every antenna's window PWV within 3.3 %
// of the truth over seeds 31-35 of testdata/scenarios/mismatched-episodes.toml, where
// apply_cross_calibration gave up to 8.7 % and no cross-calibration up to 10 %. Away from the
// mean sky it leaves (g - 1)(S - mean(S)). Throws InvalidInput when the calibration does not
// match the night's shape.
Night apply_cross_calibration_at_mean_sky(const Night& night, const CrossCalibration& calibration);

// The night-file result group "cross_calibration": [antenna, channel] offsets, gains, their
// sigmas and drifts, flags per unit, the block sky.
ResultGroup cross_calibration_result_group(const CrossCalibration& calibration);

}  // namespace wvr
