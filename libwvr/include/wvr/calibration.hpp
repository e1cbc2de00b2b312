#pragma once
// Scaling solve: how much of the radiometer-predicted phase the calibrator actually shows.
//
// For every calibrator phase row (time t, baseline a-b, frequency f) the model is
//   phi_ab(t) = k_f (s_b L_b(t) - s_a L_a(t)) + o_b,n - o_a,n        (wrapped),
// with k_f = 2 pi f / c times the wet phase-per-path factor at f (dispersion), L the
// radiometer wet path series (wvr/correction.hpp), s the scale factors and o per-scan,
// per-antenna phase offsets (nuisance parameters; the reference antenna's are fixed at 0;
// they absorb the slowly varying mean path and instrumental phase, so only changes within a
// calibrator scan and differences between antennas inform s). By option s is one value for
// the array, one per antenna (with a Gaussian prior around the array scale), and/or one per
// time segment. Residuals are wrap-aware: (cos phi_obs - cos phi_model, sin phi_obs -
// sin phi_model), i.e. the 1 - cos form, under a Cauchy loss against outliers. Start values
// come from a grid search over the array scale with closed-form (circular-mean) offsets, so
// the solve also works at 650 GHz where the uncorrected phase wraps many times. Solver: Ceres
// (sparse normal Cholesky); uncertainties: ceres::Covariance of the scale blocks.
//
// Antenna phases (the default form): an integration whose baselines all include the reference
// antenna is fitted as it is (its rows already are antenna phases). An integration with
// redundant baselines is first reduced to antenna phases psi_a, the least-squares solution of
// the same wrap-aware (1 - cos) cost, sum over baselines |e^i phi_ab - e^i (psi_b - psi_a)|^2
// (circular-mean sweeps from a spanning tree), and the fit then models
//   psi_a(t) = k_f s_a L_a(t) + o_a,n + c(t)                      (wrapped)
// with one common phase c(t) per integration. For small residuals the baseline cost is a
// constant plus the graph Laplacian form of the antenna residuals; with every baseline present
// that form is N times the antenna residuals about their mean, so each antenna row carries
// weight N (in general 1 + 2 B / N for B baselines among N antennas, exact for complete and
// two-antenna graphs, an approximation for others). Memory then grows with antennas x
// integrations, not with baselines.

#include <functional>
#include <string>
#include <vector>

#include "wvr/dispersion.hpp"
#include "wvr/night.hpp"

namespace wvr {

// Radiometer wet path of every antenna at the radiometer times.
struct AntennaPaths {
  std::size_t antennas = 0;
  std::vector<double> time_s;       // [time]
  std::vector<double> path_mm;      // [antenna, time], NaN where unusable
  std::vector<std::uint8_t> flags;  // [antenna, time], CorrectorFlag bits (0 = usable)
};

// Which phases the scaling is fitted on (see the top of this file).
enum class ScalingSolveForm {
  kAntennaPhases,   // redundant baselines reduced to antenna phases per integration first
  kBaselinePhases,  // every baseline phase row fitted; memory grows with baselines
};

struct CalibrationOptions {
  ScalingSolveForm form = ScalingSolveForm::kAntennaPhases;
  bool per_antenna_scale = false;
  double antenna_scale_prior_sigma = 0.1;  // prior N(array scale, sigma) on each antenna scale
  double segment_s = 0.0;                  // > 0: one array scale per segment of this length
  int reference_antenna = 0;
  double loss_scale = 0.5;        // Cauchy loss scale on the chord |e^i phi_obs - e^i phi_model|
  double scale_search_min = 0.3;  // grid search range of the array scale
  double scale_search_max = 2.0;
  int max_iterations = 100;
  int threads = 0;  // worker threads of the grid search and the solver (0 = all cores)

  void validate() const;  // throws InvalidInput
};

enum class CalibrationStatus { kConverged, kNoConvergence, kNoData, kSolverFailure };
const char* to_string(CalibrationStatus status);

struct CalibrationResult {
  CalibrationStatus status = CalibrationStatus::kNoData;
  std::string message;
  double scale = 1.0;  // array scale (first segment when segmented)
  double scale_sigma = 0.0;
  std::vector<double> antenna_scale,
      antenna_scale_sigma;  // [antenna]; equal to scale if not fitted
  // Segments holding calibrator rows only (a segment within target scans has no scale); a
  // sigma is NaN when the covariance is not available.
  std::vector<double> segment_start_s, segment_scale, segment_scale_sigma;
  std::size_t rows_used = 0, rows_skipped = 0;
  double final_cost = 0.0;
  int iterations = 0;

  bool ok() const { return status == CalibrationStatus::kConverged; }
  std::string brief_report() const;
};

// Solves the scaling. `phase_per_path(freq_ghz)` gives the wet phase-per-path (dispersion)
// factor at a calibrator frequency. Rows with unknown antennas, non-finite phases, or times
// without usable paths are skipped (counted in rows_skipped); throws InvalidInput only for bad
// options or paths whose shape does not match the night.
CalibrationResult solve_scaling(const Night& night,
                                const AntennaPaths& paths,
                                const PhasePerPath& phase_per_path,
                                const CalibrationOptions& options = {});

}  // namespace wvr
