#include "pipeline.hpp"

#include <chrono>
#include <cmath>
#include <iomanip>
#include <iostream>

#include "huge_page_malloc.hpp"
#include "wvr/absorption.hpp"
#include "wvr/night_file.hpp"
#include "wvr/site_config.hpp"

namespace skyphase {

void add_common(CLI::App& cmd, CommonOptions& o) {
  cmd.add_option("night", o.night_file, "Night file (HDF5)")->required()->check(CLI::ExistingFile);
  cmd.add_option("-o,--output", o.output_file, "Night file to write with the results")->required();
  cmd.add_option("--site", o.site_file,
                 "Site file (TOML) overriding the night's own site model (default: the night's "
                 "site record, or defaults from its weather and array height)")
      ->check(CLI::ExistingFile);
  cmd.add_option("--window-s", o.window_s,
                 "Coefficient window (s) of the retrieval (default: the stored retrieval's, or "
                 "60; a stored retrieval made with another window is recomputed)");
  cmd.add_option("--absorption-model", o.absorption_model,
                 "Absorption model of the retrieval: p676 (ITU-R P.676-13) or r17 (Rosenkranz 2017 "
                 "water vapour) (default: the stored retrieval's, or p676; a stored retrieval "
                 "made with another model is recomputed)")
      ->check(CLI::IsMember(wvr::absorption_model_keys()));
  cmd.add_option("--threads", o.threads, "Worker threads of every stage (0 = all cores)")
      ->capture_default_str()
      ->check(CLI::Range(0, 1024));
  cmd.add_flag("--overwrite", o.overwrite, "Replace an existing output file");
  cmd.add_flag("--step-times", o.print_step_times,
               "Print the wall time of reading, each processing step and writing, and the page "
               "size of large allocations, on stderr");
  add_format_option(cmd, o.format);
}

namespace {

// A finite number above `minimum` (or equal to it when `inclusive`): CLI11's own range checks
// let NaN through.
CLI::Validator finite_at_least(double minimum, bool inclusive) {
  return CLI::Validator(
      [minimum, inclusive](std::string& text) -> std::string {
        double value = 0.0;
        if (!CLI::detail::lexical_cast(text, value)) return "'" + text + "' is not a number";
        if (!std::isfinite(value) || value < minimum || (!inclusive && value == minimum)) {
          return text + " is not a finite number " + (inclusive ? ">= " : "> ") +
                 CLI::detail::to_string(minimum);
        }
        return {};
      },
      std::string(inclusive ? "NUMBER >= " : "NUMBER > ") + CLI::detail::to_string(minimum));
}

}  // namespace

void add_frequency_option(CLI::App& cmd, CommonOptions& o) {
  cmd.add_option("--obs-freq-ghz", o.obs_freq_ghz,
                 "Observing frequency of the corrections (default: the night's scans)")
      ->check(finite_at_least(0.0, false));
}

void add_diagnosis_options(CLI::App& cmd, CommonOptions& o) {
  cmd.add_option("--thresholds", o.thresholds_file,
                 "Diagnosis thresholds file (TOML: name = value; defaults for names left out)")
      ->check(CLI::ExistingFile);
  cmd.add_option("--advice-layer-height-m", o.advice_layer_height_m,
                 "Turbulent layer height for fast-switching advice (m)")
      ->capture_default_str()
      ->check(finite_at_least(0.0, false));
  cmd.add_option("--advice-separation-deg", o.advice_separation_deg,
                 "Calibrator-target separation for the advice (deg)")
      ->capture_default_str()
      ->check(finite_at_least(0.0, true));
  cmd.add_option("--advice-target-rms-deg", o.advice_target_rms_deg,
                 "Residual phase rms the advice aims at (deg)")
      ->capture_default_str()
      ->check(finite_at_least(0.0, false));
}

wvr::NightProcessingOptions processing_options(const CommonOptions& o,
                                               wvr::NightStage last_stage,
                                               bool retrieve) {
  wvr::NightProcessingOptions options;
  options.last_stage = last_stage;
  if (!o.site_file.empty()) {
    options.site = wvr::load_site_config(o.site_file);
    options.site_description = "site file " + o.site_file;
  }
  if (retrieve || o.window_s || o.absorption_model) {
    wvr::NightRetrievalOptions retrieval;
    retrieval.coefficient_window_s = o.window_s.value_or(retrieval.coefficient_window_s);
    retrieval.absorption_model = o.absorption_model.value_or(retrieval.absorption_model);
    retrieval.window_fit.fit_liquid = o.fit_liquid;
    retrieval.window_fit.fit_temperature_offset = o.fit_temperature;
    options.retrieval = retrieval;
  }
  options.threads = o.threads;
  options.obs_freq_ghz = o.obs_freq_ghz;
  if (!o.thresholds_file.empty())
    options.thresholds = wvr::load_diagnosis_thresholds(o.thresholds_file);
  options.turbulence.advice_layer_height_m = o.advice_layer_height_m;
  options.turbulence.advice_separation_deg = o.advice_separation_deg;
  options.turbulence.advice_target_rms_deg = o.advice_target_rms_deg;
  // Checked before the night is read: a mistake in an option should not wait for it.
  options.validate();
  return options;
}

Processed process_and_write(const CommonOptions& o, const wvr::NightProcessingOptions& options) {
  using Clock = std::chrono::steady_clock;
  const auto seconds_since = [](Clock::time_point start) {
    return std::chrono::duration<double>(Clock::now() - start).count();
  };
  Processed p;
  auto start = Clock::now();
  wvr::NightFileStamp input_stamp;
  p.night = wvr::read_night(o.night_file, input_stamp, {.threads = o.threads});
  const double read_s = seconds_since(start);
  p.result = wvr::process_night(p.night, options);
  start = Clock::now();
  wvr::NightWriteOptions write;
  write.overwrite_output = o.overwrite;
  write.replace_existing_results = true;
  write.threads = o.threads;
  write.input_read_with = input_stamp;
  wvr::add_result_groups(o.night_file, o.output_file, p.result.result_groups, write);
  const double write_s = seconds_since(start);
  if (o.print_step_times) {
    std::cerr << std::fixed << std::setprecision(3) << "step time: read " << read_s << " s\n";
    for (const auto& [step, wall_s] : p.result.step_wall_s)
      std::cerr << "step time: " << step << " " << wall_s << " s\n";
    std::cerr << "step time: write " << write_s << " s\n" << std::defaultfloat;
    std::cerr << (huge_page_malloc_on()
                      ? "memory: large allocations on huge pages (glibc.malloc.hugetlb=1)\n"
                      : "memory: large allocations on 4 KiB pages (glibc.malloc.hugetlb not 1)\n");
  }
  return p;
}

nlohmann::ordered_json site_json(const wvr::ResolvedSite& site) {
  return {{"source", wvr::to_string(site.source)},
          {"name", site.site.name},
          {"description", site.description}};
}

void print_notes(const wvr::NightProcessingResult& result) {
  for (const std::string& note : result.notes) std::cout << "note: " << note << "\n";
}

}  // namespace skyphase
