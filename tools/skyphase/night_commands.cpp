// skyphase simulate and skyphase inspect: synthetic nights and night-file summaries.
#include <chrono>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>
#include <type_traits>
#include <variant>

#include "commands.hpp"
#include "output.hpp"
#include "wvr/night_file.hpp"
#include "wvr/night_summary_fields.hpp"
#include "wvr/scenario.hpp"
#include "wvr/simulator.hpp"

namespace skyphase {
namespace {

struct SimulateOptions {
  std::string scenario_file;
  std::string output_file;
  std::optional<std::int64_t> seed;
  int threads = 0;
  bool overwrite = false;
  Format format = Format::kTable;
};

void run_simulate(const SimulateOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  wvr::Scenario scenario = wvr::load_scenario(o.scenario_file);
  if (o.seed) scenario.seed = static_cast<std::uint64_t>(*o.seed);
  wvr::SimulationReport report;
  const wvr::Night night = wvr::simulate_night(scenario, {o.threads}, &report);
  const auto write_start = std::chrono::steady_clock::now();
  wvr::NightWriteOptions write_options;
  write_options.overwrite_output = o.overwrite;
  write_options.threads = o.threads;
  wvr::write_night(night, o.output_file, write_options);
  const auto end = std::chrono::steady_clock::now();
  const double write_s = std::chrono::duration<double>(end - write_start).count();
  const double total_s = std::chrono::duration<double>(end - start).count();
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j;
    j["scenario"] = scenario.name;
    j["output"] = o.output_file;
    j["antennas"] = night.antenna_count();
    j["samples"] = night.time_count();
    j["channels"] = night.channel_count();
    j["calibrator_phase_rows"] = night.calibrator_phases.time_s.size();
    j["screen_seconds"] = report.screen_seconds;
    j["brightness_seconds"] = report.brightness_seconds;
    j["write_seconds"] = write_s;
    j["total_seconds"] = total_s;
    print_json(j);
    return;
  }
  std::cout << "simulated '" << scenario.name << "': " << night.antenna_count() << " antennas x "
            << night.time_count() << " samples x " << night.channel_count() << " channels -> "
            << o.output_file << "\n"
            << "time: screens " << fixed(report.screen_seconds, 2) << " s, brightness "
            << fixed(report.brightness_seconds, 2) << " s, write " << fixed(write_s, 2)
            << " s, total " << fixed(total_s, 2) << " s\n";
}

struct InspectOptions {
  std::string file;
  Format format = Format::kTable;
};

void run_inspect(const InspectOptions& o) {
  const wvr::Night night = wvr::read_night(o.file);
  const wvr::NightSummary s = wvr::summarize(night);
  if (o.format != Format::kJson) {
    std::cout << wvr::format_night_summary(s);
    return;
  }
  nlohmann::ordered_json j;
  j["file"] = o.file;
  // Every field of the summary's table under its JSON name (wvr/night_summary_fields.hpp).
  for (const wvr::NightSummaryField& field : wvr::night_summary_fields()) {
    if (field.json_name == nullptr) continue;
    std::visit(
        [&](auto member) {
          const auto& value = s.*member;
          if constexpr (std::is_same_v<std::decay_t<decltype(value)>, std::vector<wvr::NightGap>>) {
            nlohmann::ordered_json gaps = nlohmann::ordered_json::array();
            for (const wvr::NightGap& g : value)
              gaps.push_back({{"start_s", g.start_s}, {"stop_s", g.stop_s}});
            j[field.json_name] = gaps;
          } else {
            j[field.json_name] = value;
          }
        },
        field.member);
  }
  print_json(j);
}

}  // namespace

void add_simulate_command(CLI::App& app) {
  auto options = std::make_shared<SimulateOptions>();
  CLI::App* cmd =
      app.add_subcommand("simulate", "Simulate an observing night from a scenario file");
  cmd->add_option("scenario", options->scenario_file, "Scenario file (TOML)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-o,--output", options->output_file, "Night file to write (HDF5)")->required();
  cmd->add_option("--seed", options->seed, "Override the scenario's random seed");
  cmd->add_option("--threads", options->threads, "Worker threads (0 = all cores)")
      ->capture_default_str()
      ->check(CLI::Range(0, 1024));
  cmd->add_flag("--overwrite", options->overwrite, "Replace an existing output file");
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_simulate(*options); });
}

void add_inspect_command(CLI::App& app) {
  auto options = std::make_shared<InspectOptions>();
  CLI::App* cmd = app.add_subcommand("inspect", "Summarise a night file");
  cmd->add_option("file", options->file, "Night file (HDF5)")->required()->check(CLI::ExistingFile);
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_inspect(*options); });
}

}  // namespace skyphase
