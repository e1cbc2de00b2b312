#pragma once
// The small subtables of a MeasurementSet that the main table's rows refer to.

#include <array>
#include <filesystem>
#include <string>
#include <vector>

namespace wvr::archive {

struct SpectralWindow {
  std::string name;
  std::vector<double> chan_freq_ghz;
  std::vector<double> chan_width_ghz;
  double mean_freq_ghz = 0.0;
};

struct DataDescription {
  int spectral_window = -1;
  // Correlations to average for a phase (parallel hands: RR, LL, XX, YY), by position.
  std::vector<int> parallel_hands;
};

struct Field {
  std::string name;
};

enum class StateIntent { kCalibrator, kTarget, kOther };

struct MsMetadata {
  std::vector<SpectralWindow> spectral_windows;
  std::vector<DataDescription> data_descriptions;
  std::vector<std::string> antenna_names;
  std::vector<std::array<double, 3>> antenna_itrf_m;
  std::vector<Field> fields;
  std::vector<StateIntent> states;
};

// Reads SPECTRAL_WINDOW, DATA_DESCRIPTION, POLARIZATION, ANTENNA, FIELD and STATE. Throws
// InvalidInput naming the subtable and column for anything missing or inconsistent.
MsMetadata read_ms_metadata(const std::filesystem::path& ms);

// The spectral windows whose channels all lie within halfwidth_ghz of 183.31 GHz.
std::vector<int> windows_near_water_line(const MsMetadata& metadata, double halfwidth_ghz);

// What windows_near_water_line searched, for messages: the criterion and every window.
std::string describe_water_line_search(const MsMetadata& metadata, double halfwidth_ghz);

// The spectral window holding the radiometer: `requested` by index or NAME, else the one
// whose channels all lie within halfwidth_ghz of 183.31 GHz. The error lists the windows
// searched when none (or several) qualify.
int find_radiometer_window(const MsMetadata& metadata,
                           const std::string& requested,
                           double halfwidth_ghz,
                           const std::string& ms_label);

}  // namespace wvr::archive
