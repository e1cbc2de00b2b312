#pragma once
// What the processing subcommands (retrieve, calibrate, correct, diagnose, process, report)
// share: their common options, turned into the library night pipeline's options
// (wvr/night_processing.hpp), and writing its result groups. No science here.

#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "output.hpp"
#include "wvr/night.hpp"
#include "wvr/night_processing.hpp"

namespace skyphase {

struct CommonOptions {
  std::string night_file;
  std::string output_file;
  std::string site_file;           // empty: the night's own site (record, or defaults)
  std::optional<double> window_s;  // unset: the stored retrieval's, or 60 s
  // Absorption model key of the retrieval; unset: the stored retrieval's, or p676.
  std::optional<std::string> absorption_model;
  bool fit_liquid = false;       // retrieve only
  bool fit_temperature = false;  // retrieve only
  int threads = 0;
  bool overwrite = false;
  bool print_step_times = false;  // wall time of each step on stderr
  Format format = Format::kTable;
  std::optional<double> obs_freq_ghz;
  // Fast-switching advice (diagnose, process and report).
  double advice_layer_height_m = 1000.0;
  double advice_separation_deg = 2.0;
  double advice_target_rms_deg = 30.0;
  // Diagnosis thresholds file (TOML, name = value); empty = the defaults.
  std::string thresholds_file;
};

// Registers night, -o, --site, --window-s, --absorption-model, --threads, --overwrite,
// --step-times and --format.
void add_common(CLI::App& cmd, CommonOptions& o);
// Registers --obs-freq-ghz.
void add_frequency_option(CLI::App& cmd, CommonOptions& o);
// Registers --thresholds and the fast-switching advice options.
void add_diagnosis_options(CLI::App& cmd, CommonOptions& o);

// The library pipeline's options for the stages up to `last_stage` (reads the site and
// thresholds files). `retrieve` asks for a retrieval with the given options even when none
// was set on the command line.
wvr::NightProcessingOptions processing_options(const CommonOptions& o,
                                               wvr::NightStage last_stage,
                                               bool retrieve = false);

// Reads the night, runs the pipeline, writes the output night with the new result groups
// (with --step-times, prints the wall time of reading, each pipeline step and writing).
struct Processed {
  wvr::Night night;
  wvr::NightProcessingResult result;
};
Processed process_and_write(const CommonOptions& o, const wvr::NightProcessingOptions& options);

// {"source": ..., "description": ...} of the site used.
nlohmann::ordered_json site_json(const wvr::ResolvedSite& site);
// The pipeline's notes, one "note: ..." line each.
void print_notes(const wvr::NightProcessingResult& result);

}  // namespace skyphase
