#pragma once
// Temporal structure functions: radiometer path series against lag, and calibrator phases in
// time mapped onto the flow (see wvr/structure_function.hpp for the method).

#include <array>
#include <span>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/diagnostic_status.hpp"
#include "wvr/night.hpp"
#include "wvr/structure_function_estimate.hpp"

namespace wvr {

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

}  // namespace wvr
