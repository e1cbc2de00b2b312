#pragma once
// Spatial structure function per baseline, D(d) in m^2 of path, from calibrator phases or
// radiometer paths, and its logarithmic binning (see wvr/structure_function.hpp for the method).

#include <span>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/diagnostic_status.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/structure_function_estimate.hpp"

namespace wvr {

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
  // Radiometer paths: antenna pairs visited; beyond this many, an even subsample over
  // baseline length (the shortest and the longest kept) keeps the cost linear in antennas x
  // samples. 2,016 is every pair of 64 antennas.
  std::size_t max_pairs = 2016;
  // Worker threads of the pairs and of the slab thickness' jackknife refits (0 = all cores);
  // results do not depend on it.
  int threads = 0;

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

}  // namespace wvr
