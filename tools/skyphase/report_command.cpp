// skyphase report: diagnose a night and render the HTML night report (figures by the Python
// package's wvr.report module with matplotlib).
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <vector>

#include "commands.hpp"
#include "diagnose_output.hpp"
#include "python_runner.hpp"
#include "wvr/error.hpp"

namespace skyphase {
namespace {

struct ReportOptions {
  CommonOptions common;
  std::string directory;
};

void run_report(const ReportOptions& o) {
  const std::filesystem::path dir = o.directory;
  std::filesystem::create_directories(dir);
  CommonOptions common = o.common;
  common.output_file = (dir / "night-diagnosed.h5").string();
  common.overwrite = true;
  const DiagnosedNight d = diagnose_and_write(common);
  const std::filesystem::path summary = dir / "summary.json";
  {
    std::ofstream out(summary);
    out << d.json.dump(2) << "\n";
  }
  const int status = run_python_module(
      "wvr.report", {common.output_file, "--summary", summary.string(), "-o", dir.string()});
  if (status != 0)
    throw wvr::Error("the report renderer (python -m wvr.report) failed with status " +
                     std::to_string(status));
  std::cout << "report: " << (dir / "index.html").string() << "\n"
            << "summary: " << summary.string() << "\n"
            << "night with results: " << common.output_file << "\n";
}

}  // namespace

void add_report_command(CLI::App& app) {
  auto options = std::make_shared<ReportOptions>();
  CLI::App* cmd = app.add_subcommand(
      "report", "Diagnose a night and write an HTML report with figures and a JSON summary");
  cmd->add_option("night", options->common.night_file, "Night file (HDF5)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-o,--output", options->directory,
                  "Directory for index.html, figures and summary.json")
      ->required();
  cmd->add_option("--site", options->common.site_file,
                  "Site file (TOML) overriding the night's own site model")
      ->check(CLI::ExistingFile);
  cmd->add_option("--window-s", options->common.window_s,
                  "Coefficient window (s) of the retrieval (default: the stored one's, or 60)");
  add_frequency_option(*cmd, options->common);
  add_diagnosis_options(*cmd, options->common);
  cmd->callback([options] { run_report(*options); });
}

}  // namespace skyphase
