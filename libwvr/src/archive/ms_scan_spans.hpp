#pragma once
// Which scan, field and observation the cross-correlation rows of a MeasurementSet hold at a
// given time (casacore side; C++17, see casacore_guard.hpp).

#include <cstddef>
#include <filesystem>
#include <vector>

namespace wvr::archive {

// The time span of one (SCAN_NUMBER, FIELD_ID, OBSERVATION_ID) in the cross-correlation rows:
// min(TIME - INTERVAL/2) to max(TIME + INTERVAL/2).
struct ScanSpan {
  int scan = -1, field = -1, observation = -1;
  double start_mjd_s = 0.0, stop_mjd_s = 0.0;
};

// The spans of `ms`, by start time, from one pass over the main table in chunks of rows.
// Throws InvalidInput naming the MS when it has no cross-correlation rows or a TIME is not
// finite.
std::vector<ScanSpan> scan_spans(const std::filesystem::path& ms, std::size_t chunk_rows);

// The span holding t (the earliest starting when several do), else the nearest in time.
// `spans` must not be empty.
const ScanSpan& span_at(const std::vector<ScanSpan>& spans, double t);

}  // namespace wvr::archive
