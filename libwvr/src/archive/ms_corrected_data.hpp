#pragma once
// Writes a corrected copy of a MeasurementSet (casacore side of the export; C++17, see
// casacore_guard.hpp).

#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <vector>

namespace wvr::archive {

// Antenna correction phases on a time grid, at the reference frequency.
struct CorrectionPlan {
  std::vector<double> time_mjd_s;             // [time], increasing
  std::vector<double> phase_rad;              // [antenna, time]: add to the antenna's phase
  std::vector<std::uint8_t> usable;           // [antenna, time]
  std::function<double(double)> phase_scale;  // phase at freq_ghz / phase at the reference
  std::string history;                        // HISTORY MESSAGE
};

struct CorrectedCopyResult {
  std::size_t rows = 0;
  std::size_t rows_flagged = 0;
};

// Deep-copies `ms` to `temporary` and fills CORRECTED_DATA there: row (i, j) gets
// DATA * exp(i (phi_j - phi_i) scale(nu_channel)), phases interpolated linearly in time between
// usable samples; cross-correlation rows without a usable correction for both antennas are
// flagged (FLAG and FLAG_ROW). The caller renames `temporary` into place.
CorrectedCopyResult write_corrected_copy(const std::filesystem::path& ms,
                                         const std::filesystem::path& temporary,
                                         const CorrectionPlan& plan,
                                         std::size_t antennas,
                                         std::size_t chunk_rows);

}  // namespace wvr::archive
