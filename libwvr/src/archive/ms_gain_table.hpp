#pragma once
// Writes an antenna-based gain table (casacore's calibration-table layout for complex gains)
// from a correction plan and the MeasurementSet it applies to (casacore side; C++17, see
// casacore_guard.hpp). Layout and conventions: libwvr/ARCHIVE.md.

#include <cstddef>
#include <filesystem>
#include <string>
#include <vector>

#include "archive/correction_plan.hpp"

namespace wvr::archive {

struct GainTableRequest {
  // Radiometer window to leave out, by index or NAME; empty: the one whose channels all lie
  // within radiometer_search_halfwidth_ghz of 183.31 GHz (none found: every window kept).
  std::string radiometer_window;
  double radiometer_search_halfwidth_ghz = 20.0;
  std::size_t chunk_rows = 20000;  // main-table rows read per chunk for the scan spans
};

struct GainTableResult {
  std::size_t solutions = 0;          // main-table rows written
  std::size_t solutions_flagged = 0;  // rows whose correction is unusable (FLAG set)
  std::vector<int> spectral_windows;  // windows with solutions
  int radiometer_window = -1;         // the window left out; -1 when none was identified
  std::string radiometer_search;      // what was searched when none was identified
};

// Creates the gain table at `temporary` (which must not exist): one row per correction time
// sample, spectral window (except the radiometer's) and antenna; gain exp(i phase * scale(f))
// with f the window's centre frequency (mean CHAN_FREQ); FLAG where the plan's sample is
// unusable. The caller renames `temporary` into place. `ms` is only read.
GainTableResult write_gain_table(const std::filesystem::path& ms,
                                 const std::filesystem::path& temporary,
                                 const CorrectionPlan& plan,
                                 std::size_t antennas,
                                 const GainTableRequest& request);

}  // namespace wvr::archive
