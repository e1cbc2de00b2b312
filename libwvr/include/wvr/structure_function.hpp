#pragma once
// Structure functions and wind of a night's phase screen, for night diagnosis.
//
// 1. Spatial structure function per baseline, D(d) in m^2 of path:
//    * from the calibrator phases (observed or corrected): the variance of the baseline phase
//      about each calibrator scan's circular mean (wrap-aware deviations), pooled over the
//      scans and converted to path with lambda / 2 pi (so nights at different frequencies
//      compare; the path is the effective one at the observing frequency, dispersion
//      included). The per-scan offsets of calibration are unknown, so only fluctuations within
//      a scan are seen: the estimate is capped near D(|v| * scan length) and is a temporal
//      quantity mapped onto baselines, not the full spatial D of long baselines.
//    * from the radiometer paths (AntennaPaths): the variance of L_b - L_a about its mean over
//      long windows (default: the whole night). Var(L_b - L_a) = 2 sigma^2 - 2 B(d) = D(d), so
//      with windows long compared to d / |v| this is the full spatial structure function up
//      to the outer scale; the per-antenna constants of the retrieval drop out with the mean.
//    Baseline length d is the horizontal (east, north) distance between the antennas, NOT the
//    projection onto the sky plane: all lines of sight are parallel, so two antennas cross a
//    horizontal layer at points whose separation is their ground separation (the pierce-point
//    offset h / tan(el) toward the azimuth is common to all antennas). The slant geometry
//    scales D by the airmass factor but leaves the shape (slopes, break) alone.
// 2. A broken power law fitted to D(d) in log-log with Ceres:
//      ln D = ln A + alpha_short x + (alpha_long - alpha_short) w ln(1 + e^(x / w)),
//      x = ln(d / d_break),
//    i.e. two power laws whose asymptotes meet at d_break (value A there), joined smoothly
//    over a width w in ln d; optionally saturating, D_sat (1 - exp(-D / D_sat)).
//    For the slab (von Karman) spectrum of wvr/phase_screen.hpp the asymptotes are
//    D ~ W d^(5/3) and D ~ W^2 d^(2/3); they meet at d = 0.343 W (closed form in
//    slab_break_over_thickness()). The slab's transition is broad and asymmetric: the thick
//    slope falls short of 5/3 by ~0.4 (d / W)^(1/3) (the finite slab cuts off the z
//    integral: D = a W d^(5/3) - b W^(2/3) d^2 + ...), so a fit with a free transition width
//    puts the break further out, at about 0.58 W (measured on the LayerSpectrum curve over
//    W/100 .. 30 W, the same for W = 100 m .. 1 km). The break is kept only when it lowers the
//    Bayesian information criterion against a single power law.
//    On one- to few-hour nights the km-scale points carry the sample variance of a few
//    independent screen patches; the broken power law then often puts its break at a wiggle
//    (slopes scattering by 0.3 and more between nights).
// 2b. The slab model itself, D = D(W) g(d / W), fitted for the equivalent layer thickness W
//    (fit_slab_thickness): one shape parameter instead of three, so it is far steadier (600 m
//    layer: W = 722 m, +20 %, from six one-hour simulated nights). Its W is the "break length" the
//    diagnosis reports; slopes are measured in each regime relative to it.
// 3. Temporal structure function per antenna or per baseline path series vs lag (through
//    wvr::temporal_structure_function).
// 4. Wind under frozen flow: the lag tau_ab maximising the cross-correlation of two
//    antennas' high-passed path series satisfies tau_ab = b_ab . u with u = v / |v|^2 (the
//    screen at antenna b repeats antenna a's after the time the flow takes to carry it along
//    the baseline). A weighted least-squares fit of u over many pairs gives the velocity of the
//    screen relative to the pierce points (their slow drift with the source is not removed).
//
// Usage:
//   wvr::SpatialStructureResult sf = wvr::radiometer_structure_function(night, paths);
//   wvr::StructureFunctionEstimate binned = wvr::bin_structure_function(sf);
//   wvr::BrokenPowerLawFit fit = wvr::fit_broken_power_law(binned.separation, binned.value_m2);
//   wvr::SlabThicknessFit slab = wvr::fit_slab_thickness(binned.separation, binned.value_m2);
//   wvr::WindEstimate wind = wvr::estimate_wind(night, paths);

#include <array>
#include <cmath>
#include <limits>
#include <span>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/phase_screen.hpp"

namespace wvr {

// How a diagnostic computation ended.
enum class DiagnosticStatus {
  kOk,
  kNoData,        // nothing usable: no scans, one antenna, all samples non-finite
  kTooFewPoints,  // fit only: too few points for the full model (a reduced model was fitted)
  kNoConvergence,
  kSolverFailure,
};
const char* to_string(DiagnosticStatus status);

// ---- Spatial structure function ----

struct SpatialStructureOptions {
  // Radiometer paths: length of the windows over which the baseline path mean is removed (s);
  // 0 = one window for the whole night.
  double window_s = 0.0;
  // Minimum samples of a scan or window for it to count (its mean would be too noisy below).
  std::size_t min_samples = 10;
  // Radiometer paths: white path noise of each antenna (rms per sample, mm), e.g. from
  // antenna_path_noise_mm(). Its share of Var(L_b - L_a), sigma_a^2 + sigma_b^2, is
  // subtracted from each baseline (and reported in noise_m2); empty = nothing subtracted.
  std::vector<double> antenna_path_noise_mm;

  void validate() const;  // throws InvalidInput
};

// D(d) of one baseline.
struct BaselineStructure {
  int antenna_a = 0, antenna_b = 0;
  double baseline_m = 0.0;    // horizontal antenna separation (m)
  double structure_m2 = 0.0;  // pooled variance of the baseline path (m^2), less noise_m2
  double noise_m2 = 0.0;      // white-noise variance subtracted (0 when none was given)
  std::size_t samples = 0;    // samples pooled
  std::size_t segments = 0;   // scans or windows pooled
};

struct SpatialStructureResult {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  std::vector<BaselineStructure> baselines;  // sorted by baseline_m
  std::size_t samples_skipped = 0;           // non-finite or unknown-antenna samples

  bool ok() const { return status == DiagnosticStatus::kOk; }
  std::string brief_report() const;
};

// From calibrator rows: `phase_rad` has one value per row of night.calibrator_phases
// (night.calibrator_phases.phase_rad, or CorrectionMetrics::corrected_phase_rad). The
// variance within each scan uses the unbiased divisor (samples - 1 per scan). Rows outside
// calibrator scans, with unknown antennas or non-finite values are skipped. Throws
// InvalidInput for bad options or a phase_rad of the wrong length.
SpatialStructureResult calibrator_structure_function(const Night& night,
                                                     std::span<const double> phase_rad,
                                                     const SpatialStructureOptions& options = {});

// From radiometer paths over every antenna pair. Throws InvalidInput for bad options, paths
// whose shape does not match the night's antennas, or an antenna_path_noise_mm of the wrong
// length or with negative values.
SpatialStructureResult radiometer_structure_function(const Night& night,
                                                     const AntennaPaths& paths,
                                                     const SpatialStructureOptions& options = {});

// White path noise per antenna (mm rms per sample) from a night retrieval: the root mean
// square of path_noise_mm over the antenna's finite windows (NaN when it has none, which
// radiometer_structure_function treats as 0).
std::vector<double> antenna_path_noise_mm(const NightRetrieval& retrieval);

// Baselines averaged in logarithmic bins (bins_per_decade > 0): separation is the geometric
// mean baseline of a bin, value_m2 the mean D, pair_count the number of baselines. Empty bins
// are left out.
StructureFunctionEstimate bin_structure_function(const SpatialStructureResult& result,
                                                 double bins_per_decade = 5.0);

// ---- Broken power-law fit ----

struct BrokenPowerLawOptions {
  bool fit_saturation = false;       // add D_sat (needs points past the outer scale)
  double transition_width = 0.5;     // w in ln d (> 0); fitted too when fit_transition_width
  bool fit_transition_width = true;  // needs >= 7 points, otherwise kept fixed
  int max_iterations = 200;

  void validate() const;  // throws InvalidInput
};

struct BrokenPowerLawFit {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  double amplitude_m2 = 0.0;  // A: the asymptotes' value at the break
  double alpha_short = 0.0, alpha_long = 0.0;
  // False when a single power law was kept (too few points, or the break did not lower the
  // BIC): the slopes are then equal and break_m is only the reference separation of A.
  bool has_break = true;
  // A slope stopped at its bound (-0.5 or 2.5): the fit describes nothing physical there, and
  // the message says which slope.
  bool slope_at_bound = false;
  double break_m = 0.0;
  double saturation_m2 = 0.0;  // 0 when not fitted
  double transition_width = 0.0;
  // 1-sigma uncertainties from the Ceres covariance scaled by the residual variance
  // (0 when the fit has no spare degrees of freedom).
  double amplitude_sigma_m2 = 0.0, alpha_short_sigma = 0.0, alpha_long_sigma = 0.0;
  double break_sigma_m = 0.0, saturation_sigma_m2 = 0.0;
  std::size_t points_used = 0;
  double rms_log_residual = 0.0;  // rms of ln D - model

  bool ok() const { return status == DiagnosticStatus::kOk; }
  // Model value D(d) in m^2.
  double evaluate_m2(double separation_m) const;
  std::string brief_report() const;
};

// Fits D(separation) (points with non-finite or non-positive values are skipped). With fewer
// points than the broken model needs (5, 6 with saturation) but at least 2, a single power
// law is fitted (alpha_short = alpha_long, break at the geometric mean separation) and the
// status is kTooFewPoints. Without saturation, the single power law is also kept (status kOk,
// has_break false) when the broken model does not lower the Bayesian information criterion.
// Throws InvalidInput for bad options or mismatched sizes.
BrokenPowerLawFit fit_broken_power_law(std::span<const double> separation_m,
                                       std::span<const double> structure_m2,
                                       const BrokenPowerLawOptions& options = {});

// d_break / W where the thick (d^5/3) and thin (d^2/3) asymptotes of the slab spectrum meet:
// B I(8/3) / (2 pi I(11/3)) with B = sqrt(pi) Gamma(4/3) / Gamma(11/6) (the k_z integral of
// the -11/6 power) and I(beta) = integral x^(1-beta) (1 - J0(x)) dx
// = -2^(1-beta) Gamma(1 - beta/2) / Gamma(beta/2) (Gradshteyn & Ryzhik 6.561 type Mellin
// transform of J0, from memory); about 0.343.
double slab_break_over_thickness();

// ---- Equivalent slab thickness ----

// What the points say about the thickness W of the turbulent layer.
enum class ThicknessConstraint {
  kMeasured,  // the best W lies within the points' separations
  // The best W lies beyond the longest separation, or the profile stays flat towards large W:
  // W is at least thickness_m (a best W outside the points is read off the slow approach of
  // the slope to 5/3 or 2/3, which a slope error of 0.02 moves by ~2x).
  kAtLeast,
  kAtMost,  // likewise below the shortest separation: W is at most thickness_m
};
const char* to_string(ThicknessConstraint constraint);

// Power-law slope of D over the points of one regime (straight line in log-log).
struct RegimeSlope {
  bool measured = false;
  double slope = std::nan("");
  double slope_sigma = std::nan("");  // from the scatter of the points about the line
  std::size_t points = 0;
  std::string message;  // why it was not measured
};

// The slab model fitted to D(d): D = D(W) g(d / W, L0 / W), with g the shape of the slab
// (von Karman) structure function of wvr/phase_screen.hpp (tabulated once per process, ~0.4 s).
// Unlike the broken power law, whose break lies at about 0.58 W for this shape, W here IS the layer
// thickness of a single-slab screen; for real skies it is the equivalent thickness.
struct SlabThicknessFit {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  ThicknessConstraint constraint = ThicknessConstraint::kMeasured;
  double thickness_m = 0.0;  // best W, or the limit when constraint is not kMeasured
  // 1-sigma interval from the profile of the log residuals (Delta chi^2 = 1 with the per-point
  // scatter estimated from the fit); an open side reaches the search limit (d_min / 100 or
  // 100 d_max).
  double thickness_low_m = 0.0, thickness_high_m = 0.0;
  double path_m2_at_thickness = 0.0;  // D(W) (m^2)
  // von Karman outer scale of the best shape (m): L0 / W is chosen among 10^0.5 .. 10^4
  // (6 per decade) when that lowers the BIC, otherwise +inf (no saturation in the points).
  double outer_scale_m = std::numeric_limits<double>::infinity();
  int shape_row = -1;  // internal: which tabulated shape evaluate_m2 uses
  std::size_t points_used = 0;
  double rms_log_residual = 0.0;
  // Slopes measured in each regime: points with d <= W / 5 (thick) and d >= 5 W (thin); all
  // points on the side where W is only a limit. The slab's own local slope approaches 5/3
  // slowly (1.42 at d = W / 10, 1.58 at W / 100) and 2/3 a little faster (0.78 at 5 W, 0.74 at
  // 10 W, 0.70 at 30 W; LayerSpectrum), so these are what a single slab would give there.
  RegimeSlope thick, thin;

  bool ok() const { return status == DiagnosticStatus::kOk; }
  double evaluate_m2(double separation_m) const;
  std::string brief_report() const;
};

// Fits ln D in log-log (points with non-finite or non-positive values skipped). Needs three
// points over a factor of two in separation (otherwise kNoData); a profile flat on both sides
// gives kTooFewPoints. Throws InvalidInput for mismatched sizes.
SlabThicknessFit fit_slab_thickness(std::span<const double> separation_m,
                                    std::span<const double> structure_m2);

// The slab fit of a night's radiometer structure function with an error from the night itself.
// The profile interval of SlabThicknessFit only reflects the scatter of the points about the
// model; the points share one realisation of the screen, whose sample variance dominates on
// nights of a few hours (simulated one-hour nights of a 600 m layer gave 0.7-1.6 W; a 20-minute
// night was off by 3.8x; the demo night's 2 h give 1.36 km for an 800 m layer). The jackknife
// over time segments sees part of that variance (demo night: sigma ln W = 0.20, one hour over
// a 600 m layer: 0.73 around 941 m), not all of it: scales longer than a segment are shared by
// every refit.
struct NightSlabThickness {
  SlabThicknessFit fit;                       // all samples
  double log_thickness_sigma = std::nan("");  // jackknife error of ln W
  double jackknife_low_m = std::nan(""), jackknife_high_m = std::nan("");  // W e^(-/+ sigma)
  std::vector<double> segment_thickness_m;  // W of each refit (one segment left out)
  std::size_t segments_dropped = 0;         // refits that gave no measured W (not pooled)

  std::string brief_report() const;
};

// radiometer_structure_function + bin_structure_function + fit_slab_thickness on the whole
// night, then, when that W is measured (not a limit), again with each of `segments` equal time
// segments left out; refits that give only a limit are dropped and counted. Throws InvalidInput
// for segments outside [2, 100] and as radiometer_structure_function does.
NightSlabThickness night_slab_thickness(const Night& night,
                                        const AntennaPaths& paths,
                                        const SpatialStructureOptions& options = {},
                                        double bins_per_decade = 5.0,
                                        int segments = 4);

// ---- Temporal structure function ----

struct TemporalStructureResult {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  double sample_interval_s = 0.0;  // median cadence of the path series
  // One entry per series: antenna_b = -1 for an antenna's own path, otherwise L_b - L_a.
  std::vector<std::array<int, 2>> series;
  std::vector<StructureFunctionEstimate> estimates;  // separation in s, value in m^2 of path

  bool ok() const { return status == DiagnosticStatus::kOk; }
  std::string brief_report() const;
};

// D(tau) of each antenna's path series (pairs empty) or of each listed baseline's path
// difference. The series is placed on a regular grid at the median cadence (missing times
// become NaN) and handed to temporal_structure_function. Lags that do not fit the series are
// an InvalidInput, as are antenna indices outside the paths.
TemporalStructureResult temporal_path_structure(const AntennaPaths& paths,
                                                std::span<const double> lag_s,
                                                std::span<const std::array<int, 2>> pairs = {});

// ---- Calibrator phases in time, mapped onto the flow ----
//
// What fast switching needs is the antenna-based residual after a time lag tau, i.e. the
// structure function at the flow separation v tau (Taylor). Halving a baseline's value,
//   D_antenna(v tau) = <(phi_ab(t + tau) - phi_ab(t))^2> / 2   (in path units),
// assumes the two antennas' changes are independent. Under frozen flow the exact relation is
//   D_b(tau) = 2 D(|u|) + 2 D(|b|) - D(|b + u|) - D(|b - u|),  u = v tau,
// and the neglected correlation term is small only when |b| >> |u| AND |b| >> the residual
// layer's thickness. Measured on the LayerSpectrum theory: across the wind the halved value is
// 0.56 of D(v tau) for W = 400 m at |b| = 2 |u|, 0.44 (|b| = 2 |u|) and 0.76 (|b| = 10 |u|)
// for W = 3 km; along the wind it is high (1.13). Fitting a single power law D = c d^alpha with
// the exact relation made it worse on a simulated 300 m dry layer (+15 % at 500 m: the power
// law misdescribes D at km baselines beyond the outer scale), so the plain halving is kept
// and its bias stated: with a 300 m dry layer and 1.5 km baselines it is within 5 % for
// lags of 5-55 s (fast_switching_night_test); under a thick residual layer seen on short
// baselines it can be low by a third (optimistic advice).
// Unlike calibrator_structure_function, this needs no per-scan offset: the differences are
// taken within one scan. The white thermal noise adds a constant 2 sigma^2 / 2 at every lag
// (kept; per-sample noise is more than a calibration averaged over its dwell carries, so the
// shortest lags are pessimistic). Separations reach v x half a scan.

struct CalibratorTemporalOptions {
  std::vector<double> lag_s;  // empty: 1, 2, 3, 5, 8, ... samples up to half the longest scan
  // Baselines shorter than this x v tau are not used at lag tau (correlated antennas; the
  // factor is our choice, see the bias above).
  double min_baseline_over_flow = 2.0;
  std::size_t min_pairs = 20;  // lags with fewer sample pairs are dropped
  // Lags whose rms phase difference exceeds this (rad) are dropped: the wrapped differences
  // would understate D (uncorrected phases at long lags). At 1 rad rms a Gaussian difference
  // passes +/- pi with probability 0.2 %.
  double max_rms_phase_rad = 1.0;

  void validate() const;  // throws InvalidInput
};

struct CalibratorTemporalResult {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  double speed_m_s = 0.0;
  std::vector<double> lag_s;
  StructureFunctionEstimate estimate;  // separation = v tau (m), value = D_antenna (m^2)
  std::size_t baselines_used = 0;

  bool ok() const { return status == DiagnosticStatus::kOk; }
  std::string brief_report() const;
};

// phase_rad: one value per calibrator row (observed, or CorrectionMetrics::corrected_phase_rad).
// Throws InvalidInput for bad options, a speed outside [1e-3, 1e3] m/s, or a phase_rad of the
// wrong length; a night without usable calibrator data gives kNoData with the reason.
CalibratorTemporalResult calibrator_temporal_structure(
    const Night& night,
    std::span<const double> phase_rad,
    double speed_m_s,
    const CalibratorTemporalOptions& options = {});

// ---- Wind ----

struct WindOptions {
  // Each series is high-passed by subtracting its running mean over this window (s), which
  // removes slow drifts (elevation, mean PWV) that would flatten the correlation peaks.
  double highpass_window_s = 120.0;
  double min_speed_m_s = 1.0;     // lag search up to |b| / min_speed_m_s ...
  double max_lag_s = 600.0;       // ... and never beyond this
  double min_correlation = 0.5;   // pairs whose peak correlation is lower are not used
  double min_baseline_m = 0.0;    // shorter pairs are not used
  double max_baseline_m = 1e300;  // longer pairs are not used
  // Series longer than this are searched first on block means (at most this many points),
  // then at full resolution around the coarse peak: 64 antennas x 8 h at 1 s take 6 s
  // instead of 50 s, with the same wind.
  std::size_t coarse_search_points = 4096;

  void validate() const;  // throws InvalidInput
};

struct PairLag {
  int antenna_a = 0, antenna_b = 0;
  double baseline_east_m = 0.0, baseline_north_m = 0.0;  // position b - position a
  double lag_s = 0.0;                                    // L_b(t + lag) best matches L_a(t)
  double peak_correlation = 0.0;
  bool used = false;
};

struct WindEstimate {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  double east_m_s = 0.0, north_m_s = 0.0;  // screen velocity (m/s)
  double speed_m_s = 0.0, speed_sigma_m_s = 0.0;
  // Direction the screen moves TOWARDS, degrees from north through east in [0, 360).
  double direction_to_deg = 0.0, direction_sigma_deg = 0.0;
  std::size_t pairs_used = 0;
  std::vector<PairLag> pairs;  // every pair examined

  bool ok() const { return status == DiagnosticStatus::kOk; }
  std::string brief_report() const;
};

// Frozen-flow velocity from the radiometer paths of every antenna pair. Throws InvalidInput
// for bad options or paths whose shape does not match the night's antennas.
WindEstimate estimate_wind(const Night& night,
                           const AntennaPaths& paths,
                           const WindOptions& options = {});

}  // namespace wvr
