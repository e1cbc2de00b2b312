#pragma once
// Calibrator phase rows grouped by (baseline, calibrator scan), shared by the spatial and the
// temporal calibrator structure functions. A night stores every baseline's rows interleaved
// in time (64 antennas x 8 h: 11.6 million rows); grouping them in a std::map cost more than
// the statistics. Here a counting sort by baseline keeps each baseline's rows in time order,
// and groups come out in the order a map keyed on (a, b, scan) would give, so sums over them
// add in the same order.

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "wvr/night.hpp"
#include "wvr/spatial_structure.hpp"
#include "wvr/temporal_structure.hpp"

namespace wvr::detail {

struct CalibratorRow {
  double time_s;
  double phase_rad;       // phase(b) - phase(a) with a < b, whatever the stored orientation
  double metres_per_rad;  // c / (2 pi f) at the row's frequency
};

struct CalibratorGroup {
  int a = 0, b = 0;                     // a < b
  std::size_t scan = 0;                 // index into the calibrator scans
  std::span<const CalibratorRow> rows;  // in time order
};

struct CalibratorGroups {
  std::vector<CalibratorRow> rows;      // grouped; the groups' spans point here
  std::vector<CalibratorGroup> groups;  // by a, then b, then scan
  std::size_t skipped = 0;  // rows outside calibrator scans or unusable (antennas, NaN, freq)
};

// Throws InvalidInput unless `phase_rad` has one value per calibrator row of the night (and
// the rows' columns have one length).
void require_row_phases(const Night& night, std::span<const double> phase_rad);

// The calibrator scans of a night, in time order.
std::vector<const Scan*> calibrator_scans(const Night& night);

// Groups the night's calibrator rows with phases `phase_rad` (one per row: the stored phases
// or corrected ones). Rows are taken in stored (time) order; a row counts toward the scan
// holding its time.
CalibratorGroups group_calibrator_rows(const Night& night,
                                       std::span<const double> phase_rad,
                                       const std::vector<const Scan*>& scans);

// calibrator_structure_function and calibrator_temporal_structure on rows grouped once: the
// night's turbulence stage runs both on each phase set (11.6 million rows with every baseline
// of 64 antennas x 8 h), and grouping cost more than either.
SpatialStructureResult calibrator_structure_from_groups(const Night& night,
                                                        const CalibratorGroups& grouped,
                                                        const SpatialStructureOptions& options);
CalibratorTemporalResult calibrator_temporal_from_groups(const Night& night,
                                                         const CalibratorGroups& grouped,
                                                         double speed_m_s,
                                                         const CalibratorTemporalOptions& options);

}  // namespace wvr::detail
