#pragma once
// Night diagnosis: where did phase correction work, where not, and why.
//
// Windows are the night's scans. In each calibrator scan the calibrator phases and the
// radiometer paths give, per baseline: the phase scatter before and after correction about
// the scan's circular mean, the white-noise floor (from successive differences of the
// corrected phase: thermal noise plus radiometer noise), the correlation and the regression
// slope between observed and radiometer-predicted phase changes, and the radiometer path rms;
// per antenna the retrieval chi-square, unusable samples, stuck channels and spikes. Target
// scans have no phases: radiometer-only evidence (clouds, antenna faults) is judged directly
// and the phase-based verdict is inherited from the neighbouring calibrator scans.
//
// Verdicts (our vocabulary), first match wins for the array; the array verdict describes the
// healthy antennas (a flagged antenna is named in antenna_faults, not in the verdict):
//   outside retrieval domain
//                     more than fault_array_fraction of the antennas have more than
//                     fault_unusable_fraction of their samples outside the retrieval's table
//                     (the source below its elevation limit, or a surface temperature or PWV
//                     outside it): no radiometer path to judge, and no radiometer at fault;
//   cannot judge      no calibrator phases or no usable radiometer in the window;
//   cloud             most antennas' radiometer residual changed: chi2/dof above
//                     cloud_chi2_per_dof against the floor (RadiometerFloor: thermal noise
//                     plus the night's own model error, after the residual's systematic part);
//   radiometer fault  more than fault_array_fraction of the antennas flagged below;
//   quiet sky         phase scatter before correction within quiet_floor_ratio x floor;
//   scale off         correlation above scale_min_correlation and either the observed/predicted
//                     slope outside 1 +/- scale_tolerance with the prediction rescaled by that
//                     slope leaving no more than dry_floor_ratio x the floor, or a residual
//                     above dry_floor_ratio x floor that rescaling per baseline brings within
//                     quiet_floor_ratio x floor (per-antenna scales: radiometer gains);
//   dry turbulence    residual after correction above dry_floor_ratio x floor;
//   corrected         otherwise.
// A target scan whose own radiometers show no cloud takes the phase-based verdict of a
// neighbouring calibrator scan, never its cloud.
// Samples outside the retrieval's domain are the pointing's or the sky's, never a unit's: they
// count towards no antenna fault, and the reason names them (with the elevation limit).
// Antenna faults: unusable retrieval samples (invalid in the file, bad brightness, failed fits)
// above fault_unusable_fraction of the samples inside the domain, a channel whose
// brightness varies less than stuck_noise_fraction x its noise, spikes (samples with chi2/dof
// above spike_chi2_per_dof in more than spike_fraction of samples), chi2/dof above
// fault_chi2_ratio x the array median (and above cloud_chi2_per_dof / 2), or a residual after
// correction above fault_residual_ratio x the array's at that baseline length (a power law in
// length fitted to the window's baselines: dry air leaves more on long baselines); a window between
// two windows that flag an antenna for the same reason flags it too (intermittent faults). Faulty
// antennas are left out of the array statistics.

#include <cstdint>
#include <filesystem>
#include <span>
#include <string>
#include <vector>

#include "wvr/correction.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr {

enum class Verdict : std::uint8_t {
  kCorrected = 0,
  kQuietSky,
  kDryTurbulence,
  kCloud,
  kRadiometerFault,
  kScaleOff,
  kCannotJudge,
  kOutsideDomain,  // added after the others: stored codes keep their values
};
std::string to_string(Verdict verdict);
// Whether the radiometer correction can be used in a window with this verdict: it removed the
// wet phase (corrected) or there was little to remove (quiet sky). Every other verdict says
// why not, or that the evidence was missing (cannot judge).
bool correction_usable(Verdict verdict);

// Reasons an antenna is flagged in a window (bits).
enum AntennaFault : std::uint8_t {
  kFaultNoData = 1,  // too many unusable retrieval samples (dead channel, dropouts; not
                     // samples outside the retrieval's domain)
  kFaultStuckChannel = 2,
  kFaultSpikes = 4,
  kFaultInconsistent = 8,    // retrieval chi2 far above the array's (gain jump, drifting channel)
  kFaultWorseResidual = 16,  // phase residual far above the array's
};
std::string describe_antenna_faults(std::uint8_t faults);

struct DiagnosisThresholds {
  double cloud_chi2_per_dof = 6.0;
  double cloud_antenna_fraction = 0.6;
  double quiet_floor_ratio = 1.5;
  double dry_floor_ratio = 2.0;
  double scale_min_correlation = 0.9;
  double scale_tolerance = 0.15;
  double fault_unusable_fraction = 0.2;
  double stuck_noise_fraction = 0.2;
  double spike_chi2_per_dof = 30.0;
  double spike_fraction = 0.005;
  double fault_chi2_ratio = 4.0;
  double fault_residual_ratio = 3.0;
  double fault_array_fraction = 0.5;
  double systematic_window_s = 3600.0;

  void validate() const;  // throws InvalidInput
};

// Name, member and meaning of every threshold (for files, JSON and help texts).
struct DiagnosisThresholdField {
  const char* name;
  double DiagnosisThresholds::*member;
  const char* meaning;
};
std::span<const DiagnosisThresholdField> diagnosis_threshold_fields();

// Thresholds from a TOML file of `name = value` lines (any subset of the names above; the
// rest keep their defaults). Throws InvalidInput naming the file and the key for unknown keys,
// non-numbers and values outside validate()'s ranges.
DiagnosisThresholds parse_diagnosis_thresholds(const std::string& toml_text,
                                               const std::string& source_name);
DiagnosisThresholds load_diagnosis_thresholds(const std::filesystem::path& path);

struct WindowDiagnosis {
  double start_s = 0.0, stop_s = 0.0;
  bool calibrator = false;
  bool inherited = false;  // phase-based verdict taken from neighbouring calibrator scans
  Verdict verdict = Verdict::kCannotJudge;
  std::string reason;                        // one line with the numbers behind the verdict
  std::vector<std::uint8_t> antenna_faults;  // [antenna]
  // Array statistics (medians over healthy baselines; NaN when not measured).
  double rms_before_deg = 0.0, rms_after_deg = 0.0, floor_deg = 0.0;
  double improvement_factor = 0.0, correlation = 0.0, slope = 0.0;
  double radiometer_path_rms_um = 0.0;
  double chi2_per_dof = 0.0;  // median residual chi2/dof against the radiometer floor
};

// The floor the radiometer evidence (cloud, spikes, inconsistent channels) was judged against:
// thermal noise plus the model error the night itself shows, after its systematic part.
struct RadiometerFloor {
  std::vector<std::string> channel_names;
  std::vector<double> thermal_noise_k;        // [channel], per sample (the radiometer's noise_k)
  std::vector<double> model_error_k;          // [channel], median over antennas of the next
  std::vector<double> antenna_model_error_k;  // [antenna, channel], non-thermal rms per sample
  std::vector<double> systematic_offset_k;    // [antenna, channel], median residual over the night
  // [antenna, channel] residual per mm of path change (K/mm): channel gains that differ
  std::vector<double> path_response_k_per_mm;
  double systematic_window_s = 0.0;  // span of the slow array-common part
  double slow_common_rms_k = 0.0;    // rms over windows and channels of that slow part
  // rms over antennas, windows and channels of each unit's slow drift (running median over the
  // same span): taken out of the evidence and judged against the array's drifts instead
  double antenna_drift_rms_k = 0.0;
  double chi2_per_dof_thermal = 0.0;  // median retrieval chi2/dof against thermal noise alone
  double chi2_per_dof_floor = 0.0;    // median chi2/dof after the systematic part, vs the floor
  std::string describe() const;       // one line with the numbers
};

struct NightDiagnosis {
  std::vector<std::string> antenna_names;
  std::vector<WindowDiagnosis> windows;
  RadiometerFloor radiometer_floor;
  DiagnosisThresholds thresholds;
  std::vector<std::string> notes;  // what could not be judged and why
};

// `retrieval` and `paths` cover the night; `metrics.corrected_phase_rad` holds the corrected
// calibrator phases (evaluate_correction, with the calibration's scales). Never throws for
// missing data (windows say "cannot judge"); throws InvalidInput for mismatched shapes and a
// negative thread count. Scans are judged on `threads` threads (0 = all cores); the result does
// not depend on the count.
NightDiagnosis diagnose_night(const Night& night,
                              const NightRetrieval& retrieval,
                              const AntennaPaths& paths,
                              const CorrectionMetrics& metrics,
                              const PhasePerPath& phase_per_path,
                              const DiagnosisThresholds& thresholds = {},
                              int threads = 0);

ResultGroup diagnosis_result_group(const NightDiagnosis& diagnosis);

}  // namespace wvr
