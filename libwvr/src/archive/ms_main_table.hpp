#pragma once
// One pass over the main table of a MeasurementSet, in chunks of rows: radiometer
// autocorrelations, scans, and calibrator phases.

#include <array>
#include <cstdint>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "archive/ms_metadata.hpp"

namespace wvr::archive {

struct RadiometerSample {
  double time_mjd_s = 0.0;
  int antenna = 0;
  int field = -1;
  bool valid = false;
  std::size_t offset = 0;  // into MainTableContents::radiometer_values (channel count values)
};

struct ScanRecord {
  double start_mjd_s = 0.0, stop_mjd_s = 0.0;
  int field = -1;
  StateIntent intent = StateIntent::kOther;
  int spectral_window = -1;  // of its first cross-correlation row
};

struct PhaseRecord {
  double time_mjd_s = 0.0;
  std::array<std::int32_t, 2> antennas{};
  double phase_rad = 0.0;
  double freq_ghz = 0.0;
};

struct MainTableContents {
  std::vector<RadiometerSample> radiometer;
  std::vector<double> radiometer_values;  // brightness as stored, channel count per sample
  std::map<int, ScanRecord> scans;        // by SCAN_NUMBER, cross-correlation rows only
  std::vector<PhaseRecord> calibrator_phases;
  std::size_t rows = 0;
  std::size_t flagged_radiometer_samples = 0;
  std::size_t flagged_calibrator_rows = 0;
  // Calibrator cross-correlation rows without a DATA cell (the column missing, or the row's
  // values in FLOAT_DATA): real values only, so they give no phase.
  std::size_t calibrator_rows_without_data = 0;
};

struct MainTableRequest {
  int radiometer_window = 0;
  int reference_antenna = -1;  // -1: every baseline
  std::size_t chunk_rows = 20000;
};

// Throws InvalidInput naming the MS, the column and the row on unreadable or inconsistent data
// (an MS cut short fails here).
MainTableContents read_main_table(const std::filesystem::path& ms,
                                  const MsMetadata& metadata,
                                  const MainTableRequest& request);

}  // namespace wvr::archive
