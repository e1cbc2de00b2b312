#pragma once
// Offline phase correction of a night: radiometer paths, antenna phase corrections,
// corrected calibrator phases and improvement metrics.
//
// Path model (the same arithmetic as the real-time StreamingCorrector, which this code calls):
// in each coefficient window W of the retrieval, antenna a's slant wet path is
//   L_a(t) = L_ref,aW + sum_c w_acW (T_ac(t) - T_ref,acW),
// where L_ref is the wet path at the window's fitted state, T_ref the model brightness there
// and w the minimum-variance combination weights. Using the absolute reference path (rather
// than the window mean) keeps L continuous across window boundaries to second order. Only
// differences between antennas and changes within a calibration cycle matter for phase: the
// slowly varying common mean and any per-antenna constant are taken up by the per-scan phase
// offsets of calibration, so no detrending is applied.

#include <span>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/streaming_corrector.hpp"

namespace wvr {

// Per-window coefficients of every antenna.
struct CoefficientWindows {
  std::size_t antennas = 0, channels = 0, windows = 0;
  std::vector<double> start_s, stop_s;                          // [window]
  std::vector<double> weight_mm_per_k, reference_brightness_k;  // [antenna, window, channel]
  std::vector<double> reference_path_mm;                        // [antenna, window]
  std::vector<std::uint8_t> usable;                             // [antenna, window]

  static CoefficientWindows from_retrieval(const NightRetrieval& retrieval);
  // From the night file's "retrieval" result group; throws InvalidInput naming a missing or
  // mis-shaped dataset.
  static CoefficientWindows from_result_group(const ResultGroup& retrieval);

  // Index of the window holding time t (clamped to the first/last window).
  std::size_t window_at(double time_s) const;
  // The StreamingCorrector coefficients of window w with per-antenna scales.
  CorrectorCoefficients corrector_coefficients(std::size_t window,
                                               std::span<const double> antenna_scale) const;
};

// Wet path of every antenna at every radiometer time, through the StreamingCorrector.
AntennaPaths compute_wvr_paths(const Night& night, const CoefficientWindows& coefficients);

// Antenna phase corrections at the radiometer times for one observing frequency.
struct PhaseCorrections {
  double obs_freq_ghz = 0.0;
  double phase_per_path = 1.0;
  std::vector<double> antenna_scale;         // [antenna]
  std::vector<double> time_s;                // [time]
  std::vector<double> phase_correction_rad;  // [antenna, time]; 0 where flagged
  std::vector<double> path_mm;               // [antenna, time]; NaN where flagged
  std::vector<std::uint8_t> flags;           // [antenna, time], CorrectorFlag bits
  // [antenna, time]: 0 measured; 1, 2 the path was predicted from other antennas (neighbours,
  // frozen flow; wvr/path_prediction.hpp), its flags cleared. All 0 from
  // compute_phase_corrections.
  std::vector<std::uint8_t> path_predicted;
  std::vector<double> predicted_expected_residual_mm;  // [antenna]; NaN where none predicted
};

PhaseCorrections compute_phase_corrections(const Night& night,
                                           const CoefficientWindows& coefficients,
                                           std::span<const double> antenna_scale,
                                           double obs_freq_ghz,
                                           double phase_per_path);

// Corrections interpolated linearly to arbitrary timestamps (e.g. visibility times):
// result [antenna, n]; NaN where a neighbouring sample is flagged or t is outside the series.
std::vector<double> interpolate_corrections(const PhaseCorrections& corrections,
                                            std::span<const double> time_s);

// Phase statistics of the calibrator rows before and after correction.
struct BaselineMetrics {
  int antenna_a = 0, antenna_b = 0;
  std::size_t samples = 0;
  double rms_before_deg = 0.0, rms_after_deg = 0.0;  // about each calibrator scan's circular mean
  double coherence_before = 0.0, coherence_after = 0.0;  // exp(-sigma^2 / 2)
  double improvement_factor = 0.0;                       // rms_before / rms_after
};
struct AntennaMetrics {
  std::size_t samples = 0;
  double rms_before_deg = 0.0, rms_after_deg = 0.0;
  double coherence_before = 0.0, coherence_after = 0.0;
  double improvement_factor = 0.0;
};
struct CorrectionMetrics {
  std::vector<BaselineMetrics> baselines;
  std::vector<AntennaMetrics> antennas;     // pooled over the baselines that contain the antenna
  std::vector<double> corrected_phase_rad;  // per calibrator row (NaN where not correctable)
  // Medians over baselines.
  double phase_rms_before_deg = 0.0, phase_rms_after_deg = 0.0;
  double coherence_before = 0.0, coherence_after = 0.0, improvement_factor = 0.0;
};

// Corrects every calibrator row with k_f * phase_per_path(f) * (s_b L_b - s_a L_a) and measures
// the phase scatter within calibrator scans.
CorrectionMetrics evaluate_correction(const Night& night,
                                      const AntennaPaths& paths,
                                      std::span<const double> antenna_scale,
                                      const PhasePerPath& phase_per_path);

// Night-file result groups.
ResultGroup calibration_result_group(const CalibrationResult& calibration);
// The calibration stored in a "calibration" group of a night of `antennas` antennas. Throws
// InvalidInput starting with `source` and naming a missing or mis-shaped dataset.
CalibrationResult calibration_from_result_group(const ResultGroup& group,
                                                std::size_t antennas,
                                                const std::string& source);
ResultGroup correction_result_group(const PhaseCorrections& corrections,
                                    const CorrectionMetrics& metrics);

}  // namespace wvr
