#pragma once
// Fast-switching advice: how often to visit a nearby calibrator so that the phase left on the
// target stays below a requested rms, with and without radiometer correction.
//
// Rule (Holdaway's fast-switching analysis; Holdaway, Radford, Owen & Foster 1995, MMA memo
// 129, and Carilli & Holdaway 1999, Radio Science 34, 817; from memory): switching between the
// target and a calibrator theta away every t_cyc seconds leaves a residual path set by the path
// structure function at the effective separation
//     d_eff = v t_cyc / 2 + h theta,
//     sigma_phi = (2 pi nu / c) sqrt(D_path(d_eff)),
// with v the wind speed, h the height of the turbulent layer and theta in radians. The phase is
// the non-dispersive 2 pi nu L / c; the residual is antenna-based (the target path minus the
// path transferred from the calibrator). A baseline whose antennas are much further apart than
// d_eff sees the two antennas' residuals independently, i.e. sqrt(2) times more.
//
// What the 1/2 means: the calibrator is measured once per cycle and its value is held (the
// previous visit is applied) to a target observed evenly over the rest of the cycle. The lag
// tau from the last visit is then uniform on [0, t_cyc): its mean is t_cyc / 2, and for a power
// law D ~ d^beta the cycle-averaged residual variance <D(v tau)> = D(v t_cyc) / (1 + beta)
// differs from D(v t_cyc / 2) = D(v t_cyc) / 2^beta by 2^beta / (1 + beta): 0.95 for the thin
// (2/3) regime, exactly 1 for beta = 1, 1.19 for the thick (5/3) regime, i.e. -2.5 % to +9 % in
// rms. Linear interpolation between the visits on either side does much better (at mid-cycle the
// residual variance is D(v t_cyc / 2) - D(v t_cyc) / 4), so for it the rule is conservative.
// Adding v t_cyc / 2 and h theta linearly is the worst case, in which the calibrator's pierce
// point lies downwind of the target's; other directions give a smaller residual.
//
// Usage:
//   wvr::FastSwitchingInput input;
//   input.uncorrected = wvr::PathStructureFunction::from_layer(layer);
//   input.corrected = wvr::PathStructureFunction::from_broken_power_law(fitted_residual);
//   input.wind_speed_m_s = 8.0;  input.layer_height_m = 1000.0;
//   input.calibrator_separation_deg = 1.5;  input.freq_ghz = 230.0;  input.target_rms_deg = 30.0;
//   wvr::FastSwitchingAdvice advice = wvr::advise_fast_switching(input);
//   std::cout << advice.brief_report() << "\n";

#include <cstddef>
#include <functional>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "wvr/phase_screen.hpp"

namespace wvr {

// A fitted broken power law for the path structure function:
//   D(d) = path_m2_at_break * (d / break_m)^inner_slope   for d <= break_m,
//   D(d) = path_m2_at_break * (d / break_m)^outer_slope   for d >  break_m,
// capped at saturation_m2 (D = min(power law, saturation_m2); +inf means no saturation).
struct BrokenPowerLaw {
  double inner_slope = 5.0 / 3.0;  // in (0, 2]; 5/3 for thick-layer Kolmogorov turbulence
  double outer_slope = 2.0 / 3.0;  // in [0, 2]; 2/3 for thin-layer Kolmogorov turbulence
  double break_m = 1000.0;         // break length (m), > 0
  double path_m2_at_break = 0.0;   // D(break_m) (m^2), > 0
  double saturation_m2 = std::numeric_limits<double>::infinity();  // > 0, or +inf

  void validate() const;  // throws InvalidInput naming the field
};

// The path structure function D(d) (m^2 of path, d in m) the advice is built on: the theory of
// one turbulent layer, a fitted broken power law, or any caller-supplied function.
class PathStructureFunction {
 public:
  // An unset function (empty() is true); path_m2 then throws InvalidInput.
  PathStructureFunction() = default;
  // Theory of one layer (LayerSpectrum::structure_function_m2), saturating at
  // LayerSpectrum::saturation_m2(). Validates the layer (InvalidInput).
  static PathStructureFunction from_layer(const TurbulentLayer& layer);
  static PathStructureFunction from_broken_power_law(const BrokenPowerLaw& fit);
  // `path_m2(d_m)` must return a finite D >= 0 for every d_m >= 0; `saturation_m2` is its
  // supremum when known (+inf otherwise), used to recognise targets met at any cycle time.
  static PathStructureFunction from_function(
      std::function<double(double)> path_m2,
      double saturation_m2 = std::numeric_limits<double>::infinity(),
      std::string label = "custom");

  // D(d_m) in m^2. Throws InvalidInput for d_m < 0 or non-finite, or when the underlying
  // function returns a negative or non-finite value.
  double path_m2(double d_m) const;
  // Upper bound of D (m^2), +inf when unbounded or unknown.
  double saturation_m2() const noexcept { return saturation_m2_; }
  const std::string& label() const noexcept { return label_; }
  bool empty() const noexcept { return !function_; }

 private:
  PathStructureFunction(std::function<double(double)> function,
                        double saturation_m2,
                        std::string label);

  std::function<double(double)> function_;
  double saturation_m2_ = std::numeric_limits<double>::infinity();
  std::string label_ = "unset";
};

// d_eff = v t_cyc / 2 + h theta (m). Throws InvalidInput for negative or non-finite inputs.
double fast_switching_effective_separation_m(double wind_speed_m_s,
                                             double cycle_time_s,
                                             double layer_height_m,
                                             double calibrator_separation_deg);

// sqrt(D(d_eff)) converted to phase (deg) at freq_ghz: the rule above for one cycle time.
double fast_switching_residual_deg(const PathStructureFunction& structure,
                                   double wind_speed_m_s,
                                   double cycle_time_s,
                                   double layer_height_m,
                                   double calibrator_separation_deg,
                                   double freq_ghz);

struct FastSwitchingInput {
  PathStructureFunction uncorrected;  // required
  // Residual structure function after radiometer correction, when available.
  std::optional<PathStructureFunction> corrected;
  double wind_speed_m_s = 10.0;            // >= 0
  double layer_height_m = 1000.0;          // >= 0
  double calibrator_separation_deg = 1.0;  // in [0, 180]
  double freq_ghz = 230.0;                 // > 0
  double target_rms_deg = 30.0;            // > 0
  // Cycle times (s, > 0) at which the residual rms is tabulated.
  std::vector<double> report_cycle_times_s = {10.0, 20.0, 30.0, 60.0, 120.0, 300.0};
  // Longest cycle time searched (s, > 0); a target still met there counts as always met.
  double max_cycle_time_s = 3600.0;

  void validate() const;  // throws InvalidInput naming the field
};

enum class CycleTimeStatus {
  kSolved,       // the longest cycle time meeting the target was found
  kUnreachable,  // even t_cyc -> 0 leaves sqrt(D(h theta)) above the target
  kAlwaysMet,    // met at every cycle time (saturation below target, or up to max_cycle_time_s)
};
const char* to_string(CycleTimeStatus status);

// Cycle-time solution for one structure function.
struct CycleTimeSolution {
  CycleTimeStatus status = CycleTimeStatus::kUnreachable;
  // Longest t_cyc with residual <= target at every shorter cycle (s); NaN when unreachable,
  // +inf when always met.
  double cycle_time_s = std::numeric_limits<double>::quiet_NaN();
  double effective_separation_m = std::numeric_limits<double>::quiet_NaN();  // at cycle_time_s
  double floor_deg = 0.0;       // residual as t_cyc -> 0: the h theta term alone
  double saturation_deg = 0.0;  // residual at infinite separation (+inf when unbounded)
  std::string message;
};

struct FastSwitchingAdvice {
  CycleTimeSolution uncorrected;
  std::optional<CycleTimeSolution> corrected;
  std::vector<double> cycle_time_s;              // the report cycle times (s)
  std::vector<double> effective_separation_m;    // d_eff at each (m)
  std::vector<double> residual_uncorrected_deg;  // rule residual at each, no correction
  std::vector<double> residual_corrected_deg;    // with correction (empty without it)
  // What the correction buys: allowed cycle time with / without correction (+inf when only
  // the corrected target is always met or only it is reachable; NaN when there is no
  // corrected function or neither side has a finite cycle time to compare).
  double cycle_time_gain = std::numeric_limits<double>::quiet_NaN();
  double target_rms_deg = 0.0;
  double freq_ghz = 0.0;

  std::string brief_report() const;
};

// Applies the rule to both structure functions. Throws InvalidInput for bad input only; an
// unreachable target is a result (status kUnreachable), not an error.
FastSwitchingAdvice advise_fast_switching(const FastSwitchingInput& input);

// ---- Direct simulation on a frozen-flow screen (checks the rule) ----

// How the calibrator path is carried to the target times.
enum class CalibratorTransfer {
  kHoldPrevious,         // the last calibrator visit applies until the next: the v t_cyc / 2 rule
  kLinearInterpolation,  // straight line between the visits on either side of each target time
};

// One antenna tracking the target while switching to a calibrator. Calibrator visits are
// instants at start_time_s + k * cycle_time_s (dwell and slew are neglected); the target is
// sampled target_samples_per_cycle times, evenly, at the midpoints of the cycle's sub-intervals.
// The calibrator's pierce point at the layer (height screen.layer().height_m) is
// h * theta away from the target's, in the direction offset_from_wind_deg counter-clockwise from
// the wind vector seen from above (0 = downwind, where v t and h theta add as in the rule).
struct FastSwitchingTrack {
  double east_m = 0.0;  // antenna position (m)
  double north_m = 0.0;
  double start_time_s = 0.0;
  double duration_s = 3600.0;              // > 0; whole cycles inside it are used
  double cycle_time_s = 20.0;              // > 0
  double calibrator_separation_deg = 1.0;  // in [0, 180]
  double offset_from_wind_deg = 0.0;
  int target_samples_per_cycle = 20;  // >= 1
  CalibratorTransfer transfer = CalibratorTransfer::kHoldPrevious;

  void validate() const;  // throws InvalidInput naming the field
};

struct FastSwitchingSimulationResult {
  double residual_path_rms_m = 0.0;  // rms of target path minus transferred calibrator path
  double target_path_rms_m = 0.0;    // rms of the uncalibrated target path about its mean
  std::size_t cycles = 0;
  std::size_t target_samples = 0;
};

// Runs the switching cycle over the track on the screen. Throws InvalidInput for a bad track,
// fewer than one whole cycle (two visits for linear interpolation), or a track (target or
// calibrator pierce point) leaving the screen grid.
FastSwitchingSimulationResult simulate_fast_switching(const PhaseScreen& screen,
                                                      const FastSwitchingTrack& track);

// The simulated residual as phase (rad) at freq_ghz (> 0).
double simulate_fast_switching_residual_rad(const PhaseScreen& screen,
                                            const FastSwitchingTrack& track,
                                            double freq_ghz);

}  // namespace wvr
