#pragma once
// The rows of the scaling solve (wvr/calibration.hpp), built from a night's calibrator phases.

#include <cstddef>
#include <cstdint>
#include <vector>

namespace wvr::detail {

// A phase row fitted as it is: a baseline phase, or an antenna phase against the reference
// antenna (an integration whose baselines all include the reference).
struct Row {
  double phase_rad;
  double k_rad_per_mm;  // 2 pi f / c * dispersion factor, per mm of path
  double path_a_mm, path_b_mm;
  std::uint32_t a, b, scan, segment;
};

// An antenna phase of an integration with redundant baselines, fitted with the integration's
// common phase.
struct AntennaRow {
  double phase_rad;
  double k_rad_per_mm;
  double path_mm;
  std::uint32_t antenna, scan, segment, integration;
};

// Per reduced integration: the weight of its antenna rows and, when the reference antenna
// took part (its phase is then 0), the reference's path for the start-value search.
struct ReducedIntegration {
  double weight;
  double reference_path_mm;  // NaN when the reference antenna is not in the integration
};

// Every row of one solve, with the count of calibrator scans and time segments they index.
struct ScalingRows {
  std::vector<Row> rows;
  std::vector<AntennaRow> antenna_rows;
  std::vector<ReducedIntegration> integrations;
  std::size_t scans = 0, segments = 1;
  std::size_t baseline_rows_used = 0, baseline_rows_skipped = 0;
};

}  // namespace wvr::detail
