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
// the solve also works at 650 GHz where the uncorrected phase wraps many times. Solver:
// Levenberg-Marquardt whose normal equations are reduced scan by scan onto the scales (the
// per-scan offsets and per-integration common phases eliminated exactly), so an iteration is
// one pass over the rows; uncertainties: the inverse of that reduced matrix at the solution,
// i.e. the scales' block of (J^T W J)^-1 with offsets and common phases marginalised. It equals
// Ceres' own solve and covariance of the same cost (tests/cpp/correction/scaling_solver_test).
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

#include <cmath>
#include <functional>
#include <span>
#include <string>
#include <vector>

#include "wvr/dispersion.hpp"
#include "wvr/night.hpp"
#include "wvr/result_fields.hpp"

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

// One scale for the array or one per antenna. Radiometer gains differ by a few per cent, which
// scales each antenna's path differently, but a night with few calibrator rows must not fit
// noise: by default both are fitted and the per-antenna scales kept only when they lower the
// calibrator residual by more than the Bayesian information criterion asks for extra
// parameters. With the wrap-aware cost read as a Gaussian likelihood of unknown variance, the
// statistic is n ln(C_array / C_per_antenna) (C each fit's residual cost without the prior) and
// the threshold (A - 1) ln n for A antennas with a scale (Schwarz 1978, Ann. Stat. 6, 461:
// BIC = k ln n - 2 ln L). n is the number of phase rows made effective for correlation: what the
// correction leaves (dry turbulence, path errors) is correlated from one integration to the
// next, and n = rows (1 - rho) / (1 + rho) with rho the lag-one correlation of the per-antenna
// fit's residuals within a scan (the AR(1) effective sample size, common practice). Counted
// row by row, per-antenna scales came out "significant" on nights without any gain error,
// where they took up dry phase that correlates with the wet path by chance.
enum class AntennaScaling { kChosenByData, kOneForArray, kPerAntenna };
const char* to_string(AntennaScaling scaling);

struct CalibrationOptions {
  ScalingSolveForm form = ScalingSolveForm::kAntennaPhases;
  AntennaScaling antenna_scaling = AntennaScaling::kChosenByData;
  double antenna_scale_prior_sigma = 0.1;  // prior N(array scale, sigma) on each antenna scale
  double segment_s = 0.0;                  // > 0: one array scale per segment of this length
  int reference_antenna = 0;
  double loss_scale = 0.5;        // Cauchy loss scale on the chord |e^i phi_obs - e^i phi_model|
  double scale_search_min = 0.3;  // grid search range of the array scale
  double scale_search_max = 2.0;
  int max_iterations = 100;
  int threads = 0;  // worker threads of the grid search and the two fits (0 = all cores)

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
      antenna_scale_sigma;         // [antenna]; equal to scale if not fitted
  bool per_antenna_scale = false;  // the scaling kept: one per antenna, or one for the array
  // The test that chose it (AntennaScaling::kChosenByData; NaN when the scaling was forced):
  // n ln(C_array / C_per_antenna) against (A - 1) ln n, see AntennaScaling.
  double antenna_scale_statistic = std::nan("");
  double antenna_scale_threshold = std::nan("");
  // Segments holding calibrator rows only (a segment within target scans has no scale); a
  // sigma is NaN when the covariance is not available.
  std::vector<double> segment_start_s, segment_scale, segment_scale_sigma;
  std::size_t rows_used = 0, rows_skipped = 0;
  double final_cost = 0.0;
  int iterations = 0;

  bool ok() const { return status == CalibrationStatus::kConverged; }
  std::string brief_report() const;
};

// The fields of a calibration stored in its result group (wvr/correction.hpp) and bound in
// Python; axes: a antennas, s segments. status and brief_report() are the group's attributes;
// the solver's counters are not stored.
std::span<const ResultArrayField<CalibrationResult>> calibration_fields();
std::size_t axis_extent(const CalibrationResult& calibration, char axis);

// Solves the scaling. `phase_per_path(freq_ghz)` gives the wet phase-per-path (dispersion)
// factor at a calibrator frequency. Rows with unknown antennas, non-finite phases, or times
// without usable paths are skipped (counted in rows_skipped); throws InvalidInput only for bad
// options or paths whose shape does not match the night.
CalibrationResult solve_scaling(const Night& night,
                                const AntennaPaths& paths,
                                const PhasePerPath& phase_per_path,
                                const CalibrationOptions& options = {});

}  // namespace wvr
