#pragma once
// Writes a corrected copy of a MeasurementSet (casacore side of the export; C++17, see
// casacore_guard.hpp).

#include <filesystem>

#include "archive/correction_plan.hpp"

namespace wvr::archive {

struct CorrectedCopyResult {
  std::size_t rows = 0;
  std::size_t rows_flagged = 0;
};

// Copies `ms` to `temporary` (its files, for a plain table) and fills CORRECTED_DATA there: row (i,
// j) gets DATA * exp(i (phi_j - phi_i) scale(nu_channel)), phases interpolated linearly in time
// between usable samples; cross-correlation rows without a usable correction for both antennas are
// flagged (FLAG and FLAG_ROW). The caller renames `temporary` into place.
CorrectedCopyResult write_corrected_copy(const std::filesystem::path& ms,
                                         const std::filesystem::path& temporary,
                                         const CorrectionPlan& plan,
                                         std::size_t antennas,
                                         std::size_t chunk_rows);

}  // namespace wvr::archive
