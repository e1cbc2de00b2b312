// skyphase report: the HTML night report, made by the Python package's wvr.report (which runs
// the library's night pipeline and draws with matplotlib). This command forwards its options.
#include <charconv>
#include <cstdlib>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "commands.hpp"
#include "pipeline.hpp"
#include "python_runner.hpp"

namespace skyphase {
namespace {

struct ReportOptions {
  CommonOptions common;
  std::string directory;
  std::string name;
};

// Shortest text that reads back as the same double.
std::string exact_text(double value) {
  char buffer[32];
  const auto end = std::to_chars(buffer, buffer + sizeof buffer, value).ptr;
  return std::string(buffer, end);
}

std::vector<std::string> renderer_arguments(const ReportOptions& o) {
  const CommonOptions& c = o.common;
  std::vector<std::string> args{c.night_file, "-o", o.directory};
  if (!o.name.empty()) args.insert(args.end(), {"--name", o.name});
  if (!c.site_file.empty()) args.insert(args.end(), {"--site", c.site_file});
  if (c.window_s) args.insert(args.end(), {"--window-s", exact_text(*c.window_s)});
  if (c.obs_freq_ghz) args.insert(args.end(), {"--obs-freq-ghz", exact_text(*c.obs_freq_ghz)});
  if (!c.thresholds_file.empty()) args.insert(args.end(), {"--thresholds", c.thresholds_file});
  args.insert(args.end(), {"--advice-layer-height-m", exact_text(c.advice_layer_height_m),
                           "--advice-separation-deg", exact_text(c.advice_separation_deg),
                           "--advice-target-rms-deg", exact_text(c.advice_target_rms_deg),
                           "--threads", std::to_string(c.threads)});
  return args;
}

void run_report(const ReportOptions& o) {
  const int status = run_python_module("wvr.report", renderer_arguments(o));
  std::cout.flush();
  // The renderer's status (0 done, 2 bad input or a refused output directory) is ours; it has
  // already printed its own one-line message.
  if (status != 0) std::exit(status);
}

}  // namespace

void add_report_command(CLI::App& app) {
  auto options = std::make_shared<ReportOptions>();
  CLI::App* cmd = app.add_subcommand(
      "report", "Process a night and write its HTML report (index.html, figures, report.json)");
  cmd->add_option("night", options->common.night_file, "Night file (HDF5)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-o,--output", options->directory,
                  "Directory of the report: new, empty, or a report to replace")
      ->required();
  cmd->add_option("--name", options->name,
                  "Name of the night in the report's title (default: the file's stem)");
  cmd->add_option("--site", options->common.site_file,
                  "Site file (TOML) overriding the night's own site model")
      ->check(CLI::ExistingFile);
  cmd->add_option("--window-s", options->common.window_s,
                  "Coefficient window (s) of the retrieval (default: the stored one's, or 60)");
  cmd->add_option("--threads", options->common.threads, "Worker threads (0 = all cores)")
      ->check(CLI::NonNegativeNumber);
  add_frequency_option(*cmd, options->common);
  add_diagnosis_options(*cmd, options->common);
  cmd->callback([options] { run_report(*options); });
}

}  // namespace skyphase
