// skyphase report: diagnose a night and render the HTML night report (figures by the Python
// package's wvr.report module with matplotlib).
#include <spawn.h>
#include <sys/wait.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <vector>

#include "commands.hpp"
#include "diagnose_output.hpp"
#include "wvr/error.hpp"

extern char** environ;

namespace skyphase {
namespace {

struct ReportOptions {
  CommonOptions common;
  std::string directory;
};

// Runs argv[0] with the given arguments and PYTHONPATH; returns its exit status.
int run_python(const std::vector<std::string>& args, const std::string& python_path) {
  std::vector<std::string> env_strings;
  for (char** e = environ; *e != nullptr; ++e) {
    if (std::string(*e).rfind("PYTHONPATH=", 0) != 0) env_strings.emplace_back(*e);
  }
  const char* existing = std::getenv("PYTHONPATH");
  env_strings.push_back("PYTHONPATH=" + python_path +
                        (existing ? std::string(":") + existing : ""));
  std::vector<char*> argv, envp;
  for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  for (std::string& e : env_strings) envp.push_back(e.data());
  envp.push_back(nullptr);
  pid_t pid = 0;
  if (posix_spawn(&pid, argv[0], nullptr, nullptr, argv.data(), envp.data()) != 0) {
    throw wvr::Error("cannot start " + args[0] +
                     " (set WVR_PYTHON to a Python with numpy and matplotlib)");
  }
  int status = 0;
  waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 1;
}

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
  const char* python = std::getenv("WVR_PYTHON");
  const std::string interpreter = python != nullptr ? python : WVR_PYTHON_EXECUTABLE;
  const int status = run_python({interpreter, "-m", "wvr.report", common.output_file, "--summary",
                                 summary.string(), "-o", dir.string()},
                                WVR_PYTHON_PACKAGE_PATH);
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
