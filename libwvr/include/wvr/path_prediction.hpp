#pragma once
// Paths for antennas whose radiometer gave no sample: predicted from the other antennas.
//
// Two predictors, both ordinary kriging (best linear unbiased prediction with weights summing
// to one) under the measured spatial structure function D(d) of the path (variogram
// gamma = D / 2). Kriging rather than inverse-distance or inverse-structure weights because it
// is the weighting that minimises the prediction variance for the measured D, it accounts for
// donors that repeat each other (two close neighbours on one side share a weight instead of
// doubling it), and it gives the expected residual of the prediction from the same D; the
// weights summing to one let the array's common path through unchanged.
// * kNeighbours: the other antennas' paths at the same time, at their positions.
// * kFrozenFlow: in addition, each upwind antenna's path from earlier, at the time the wind
//   takes to carry the screen from it to the dead antenna: L_a(t - tau_a) with
//   tau_a = (x_t - x_a) . v / |v|^2 (Taylor's frozen flow). Such a sample sits, in the screen's
//   frame, at the dead antenna's position offset only by the cross-wind part of the baseline,
//   so it is usually much closer than any neighbour. Lags are limited to max_lag_s.
// The expected residual is the square root of the kriging variance, sum w_i gamma_i0 + mu, in
// path units: what the prediction misses of the dead antenna's path fluctuations, to be set
// beside the healthy antennas' residual after correction. For frozen flow it is optimistic:
// the kriging takes the screen as frozen and does not know how much it evolves over the lag.
// Per-antenna constant path offsets of the donors add a constant to the prediction;
// calibration's per-scan phase offsets take it up like any other antenna's.
//
// Which samples are predicted: those whose radiometer gave nothing usable (CorrectorFlag
// kCorrectorNoData or kCorrectorBadBrightness), in runs of at least min_gap_s; shorter gaps
// stay flagged (a few lost samples cost little). Samples the retrieval alone refused
// (kCorrectorNoCoefficients, e.g. in cloud) are not predicted. Donors are measured samples
// only, never predicted ones.
//
// Usage:
//   wvr::PathPredictionOptions o;           // method, donors, max lag, min gap
//   wvr::PredictedPaths p = wvr::predict_missing_paths(night, paths, wind, structure_m2, o);
//   p.paths                                 // missing samples now carry predicted paths
//   p.sample_method[a * nt + k]             // 0 measured/none, else 1 + PathPredictionMethod
//   p.expected_residual_mm[a]               // rms prediction error of antenna a's path
// In the night pipeline (wvr/night_processing.hpp):
//   std::optional<wvr::PredictedPaths> p = wvr::predict_night_missing_paths(night, retrieval,
//                                                                          paths, o);

#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {

enum class PathPredictionMethod : std::uint8_t { kNeighbours = 0, kFrozenFlow = 1 };
const char* to_string(PathPredictionMethod method);  // "neighbours", "frozen_flow"
PathPredictionMethod path_prediction_method_from_string(const std::string& name);  // throws

// Per-sample marks of PredictedPaths::sample_method and PhaseCorrections::path_predicted.
constexpr std::uint8_t kPathMeasured = 0;        // measured (or not predicted)
constexpr std::uint8_t kPathFromNeighbours = 1;  // predicted from same-time neighbours
constexpr std::uint8_t kPathFromFrozenFlow = 2;  // predicted with upwind, earlier samples

struct PathPredictionOptions {
  bool enabled = true;
  // Frozen flow falls back to neighbours when the wind is not measured.
  PathPredictionMethod method = PathPredictionMethod::kFrozenFlow;
  std::size_t donors = 8;    // nearest donors (in the screen's frame) used per prediction
  double max_lag_s = 300.0;  // frozen flow: longest lag used
  double min_gap_s = 60.0;   // shorter runs of missing samples are left flagged

  void validate() const;  // throws InvalidInput naming the field
};

struct PredictedPaths {
  PathPredictionMethod method = PathPredictionMethod::kFrozenFlow;  // method asked for or used
  AntennaPaths paths;  // the input with the predicted samples filled in (flags 0 there)
  std::vector<std::uint8_t> sample_method;       // [antenna, time]: kPathMeasured, kPathFrom...
  std::vector<std::size_t> predicted_samples;    // [antenna]
  std::vector<std::size_t> frozen_flow_samples;  // [antenna]: of which used upwind samples
  std::vector<double> expected_residual_mm;      // [antenna] rms over its predicted samples, NaN
                                                 // for antennas without predicted samples
  std::vector<double> mean_donors;               // [antenna] donors per predicted sample
  // The structure function and wind the prediction used (for the output).
  double structure_thickness_m = 0.0;  // slab thickness of the fitted D (0: power law used)
  double wind_speed_m_s = 0.0, wind_direction_to_deg = 0.0;  // frozen flow only
  std::string message;  // fallbacks, antennas that could not be predicted

  bool any() const;  // some sample was predicted
  std::string brief_report(const Night& night) const;
};

// Predicts the missing samples of every antenna (see the top of this file). `structure_m2`
// gives D(separation_m) in m^2 of path (e.g. a SlabThicknessFit's evaluate_m2); `wind` is used
// by kFrozenFlow and must then be ok(). Throws InvalidInput for bad options, paths that do not
// match the night, a missing structure function, or frozen flow without a wind.
PredictedPaths predict_missing_paths(const Night& night,
                                     const AntennaPaths& paths,
                                     const WindEstimate& wind,
                                     const std::function<double(double)>& structure_m2,
                                     const PathPredictionOptions& options = {});

// For the night pipeline: nothing (nullopt) when prediction is disabled or no sample needs it;
// otherwise measures the radiometer structure function (white noise from `retrieval`
// subtracted; slab fit, else a broken power law) and, for frozen flow, the wind, then predicts.
// Frozen flow without a measured wind falls back to neighbours, and a night whose structure
// function cannot be fitted predicts nothing; `message` says so.
std::optional<PredictedPaths> predict_night_missing_paths(const Night& night,
                                                          const NightRetrieval& retrieval,
                                                          const AntennaPaths& paths,
                                                          const PathPredictionOptions& options);

// A predicted antenna beside the healthy ones, for the outputs.
struct PredictedAntennaResidual {
  std::size_t antenna = 0;
  std::size_t predicted_samples = 0, frozen_flow_samples = 0;
  double expected_residual_mm = 0.0;   // PredictedPaths::expected_residual_mm
  double expected_residual_deg = 0.0;  // the same as phase at freq_ghz
  // What the antenna's corrected calibrator phase rms should then be: the healthy antennas'
  // median and the expected residual in quadrature (an upper estimate: calibration's per-scan
  // offsets take up the slow part of the prediction error).
  double expected_phase_rms_after_deg = 0.0;
  double phase_rms_after_deg = 0.0;  // measured (CorrectionMetrics), NaN without samples
};
struct PathPredictionSummary {
  PathPredictionMethod method = PathPredictionMethod::kFrozenFlow;
  std::string message;
  double freq_ghz = 0.0;
  // Median corrected calibrator phase rms of the antennas without predicted samples (NaN when
  // none has calibrator samples), and how many there are.
  double healthy_phase_rms_after_deg = 0.0;
  std::size_t healthy_antennas = 0;
  std::vector<PredictedAntennaResidual> antennas;  // those with predicted samples
};

// The summary at freq_ghz (e.g. the observing or calibrator frequency). Throws InvalidInput when
// the metrics do not match the prediction's antennas.
PathPredictionSummary summarize_path_prediction(const PredictedPaths& predicted,
                                                const CorrectionMetrics& metrics,
                                                const PhasePerPath& phase_per_path,
                                                double freq_ghz);

// Writes the predicted samples into phase corrections made by compute_phase_corrections from
// the same night: path, phase (with the antenna's scale), flags cleared, path_predicted and
// predicted_expected_residual_mm set. Throws InvalidInput when the shapes differ.
void apply_predicted_paths(PhaseCorrections& corrections, const PredictedPaths& predicted);

}  // namespace wvr
