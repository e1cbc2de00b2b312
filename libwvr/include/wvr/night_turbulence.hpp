#pragma once
// The turbulence of a processed night: structure functions with their fits, the wind, and
// fast-switching advice with and without correction. One call from the night pipeline
// (wvr/night_processing.hpp); usable alone.
//
// Which series and fits:
// - radiometer: the wet-path structure function over the whole night, from every antenna pair,
//   with the retrieval's white path noise subtracted and cloudy or faulty windows left out
//   (liquid read as vapour moves every antenna at once; a sick unit is not the sky); binned,
//   with a broken power-law fit and the equivalent slab thickness (with a jackknife error);
// - radiometer by time: the temporal structure function of three baselines' path difference
//   (the shortest, the median and the longest) at lags from 1 s to 1000 s;
// - before / after: the calibrator phases' within-scan structure functions (capped near
//   D(wind x scan length), so no thickness is fitted to them);
// - before / after by lag: the calibrator phases in time mapped onto the flow with the wind
//   speed; the corrected one is the residual the advice with correction uses;
// - wind from the radiometer paths' lags;
// - advice: the Holdaway fast-switching rule (wvr/fast_switching.hpp) on the wet structure
//   function (slab fit, else a broken power law that did not stop at a slope bound) plus the
//   corrected residual (uncorrected case), and on the corrected residual alone.

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/fast_switching.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {

struct TurbulenceOptions {
  double advice_layer_height_m = 1000.0;  // turbulent layer height for the advice (m, >= 0)
  double advice_separation_deg = 2.0;     // calibrator-target separation (deg, [0, 180])
  double advice_target_rms_deg = 30.0;    // residual phase rms the advice aims at (deg, > 0)
  int threads = 0;  // worker threads of the pair-based estimates (0 = all cores)

  void validate() const;  // throws InvalidInput naming the field and value
};

// One measured structure function, binned, with its broken power-law fit.
struct FittedStructureFunction {
  std::string source;  // what was measured, for people
  // kOk when measured; otherwise why not (message), and points and fit stay empty.
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  StructureFunctionEstimate points;  // separation in m (baseline or flow separation)
  BrokenPowerLawFit fit;

  bool measured() const { return status == DiagnosticStatus::kOk; }
  bool fitted() const { return measured() && fit.ok(); }
  // Longest separation among the points (m); 0 when none.
  double longest_separation_m() const;
};

// Radiometer path difference of three baselines against time lag.
struct RadiometerTemporalStructure {
  std::string source;
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  std::vector<double> lag_s;
  std::vector<std::array<int, 2>> baselines;      // antenna pairs
  std::vector<double> baseline_length_m;          // [baseline]
  std::vector<std::vector<double>> structure_m2;  // [baseline][lag]
};

// Which wet structure function the advice used.
enum class AdviceWetModel { kNone, kSlabFit, kBrokenPowerLaw };
const char* to_string(AdviceWetModel model);

struct SwitchingAdvice {
  // kOk with advice; otherwise message says what was missing.
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  AdviceWetModel wet_model = AdviceWetModel::kNone;
  bool residual_used = false;  // the corrected residual by lag was available and used
  FastSwitchingInput input;    // the rule's inputs (frequency, layer, separation, target)
  std::optional<FastSwitchingAdvice> advice;
  // Where the answer leans on extrapolation beyond the measured separations.
  std::vector<std::string> notes;
};

struct NightTurbulence {
  FittedStructureFunction radiometer;
  double radiometer_noise_subtracted_m2_mean = 0.0;  // mean white-noise term per baseline
  std::optional<NightSlabThickness> slab;            // when the radiometer one was measured
  RadiometerTemporalStructure radiometer_by_time;
  FittedStructureFunction before, after;                // calibrator phases within scans
  FittedStructureFunction before_by_lag, after_by_lag;  // calibrator phases by lag
  std::vector<double> before_by_lag_lag_s, after_by_lag_lag_s;
  std::string before_by_lag_note, after_by_lag_note;  // lags dropped and why
  WindEstimate wind;
  SwitchingAdvice switching;
};

// Radiometer paths with cloudy windows, windows outside the retrieval's domain (their few
// paths come from coefficient windows fitted on the samples just inside it) and faulty
// antennas' windows set to NaN.
AntennaPaths paths_for_turbulence(const Night& night,
                                  const AntennaPaths& paths,
                                  const NightDiagnosis& diagnosis);

// Everything above. `retrieval` gives the white path noise (it may be of another shape, e.g.
// empty, and then no noise is subtracted); `metrics` the corrected calibrator phases.
// Throws InvalidInput for bad options or inputs whose shapes do not match the night.
NightTurbulence analyse_night_turbulence(const Night& night,
                                         const NightRetrieval& retrieval,
                                         const AntennaPaths& paths,
                                         const NightDiagnosis& diagnosis,
                                         const CorrectionMetrics& metrics,
                                         double obs_freq_ghz,
                                         const TurbulenceOptions& options = {});

}  // namespace wvr
