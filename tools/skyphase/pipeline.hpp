#pragma once
// What skyphase calibrate, correct, diagnose and report share: the night, its retrieval
// (read back from the file or computed now), the radiometer paths and the dispersion factor.

#include <CLI/CLI.hpp>
#include <functional>
#include <string>
#include <vector>

#include "output.hpp"
#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/site_config.hpp"

namespace skyphase {

struct CommonOptions {
  std::string night_file;
  std::string output_file;
  std::string site_file;
  double window_s = 60.0;
  bool overwrite = false;
  Format format = Format::kTable;
  // Fast-switching advice (diagnose and report).
  double advice_layer_height_m = 1000.0;
  double advice_separation_deg = 2.0;
  double advice_target_rms_deg = 30.0;
  // Diagnosis thresholds file (TOML, name = value); empty = the defaults.
  std::string thresholds_file;
};

// Registers night, -o, --site, --window-s, --overwrite and --format.
void add_common(CLI::App& cmd, CommonOptions& o);

struct Prepared {
  wvr::Night night;
  wvr::SiteConfig site;
  wvr::NightRetrieval retrieval;
  wvr::CoefficientWindows coefficients;
  std::vector<wvr::ResultGroup> new_groups;  // groups this command adds to the output
  std::function<double(double)> phase_per_path;
  wvr::AntennaPaths paths;
};

// Registers --thresholds and the fast-switching advice options (diagnose and report).
void add_diagnosis_options(CLI::App& cmd, CommonOptions& o);

Prepared prepare(const CommonOptions& o);

// The first scan's observing frequency (or the first calibrator row's, or 230 GHz).
double night_obs_freq_ghz(const wvr::Night& night);

// Per-antenna scales of the night's calibration group, when present.
struct StoredCalibration {
  bool present = false;
  double scale = 1.0, scale_sigma = 0.0;
  std::vector<double> antenna_scale, antenna_scale_sigma;
};
StoredCalibration stored_calibration(const wvr::Night& night, const std::string& source);

}  // namespace skyphase
