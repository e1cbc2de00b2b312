// skyphase retrieve: per-sample PWV and per-window path coefficients for every antenna.
#include <chrono>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "output.hpp"
#include "pipeline.hpp"
#include "retrieval_json.hpp"
#include "wvr/night_retrieval.hpp"

namespace skyphase {
namespace {

void run_retrieve(const CommonOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  const Processed p =
      process_and_write(o, processing_options(o, wvr::NightStage::kRetrieval, /*retrieve=*/true));
  const wvr::Night& night = p.night;
  const wvr::NightRetrieval& retrieval = p.result.retrieval;
  const double total_s =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  const wvr::NightRetrievalSummary s = wvr::summarize(retrieval);
  const double window_s = retrieval.windows > 0
                              ? retrieval.window_stop_s.front() - retrieval.window_start_s.front()
                              : 0.0;
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j = retrieval_summary_json(s);
    nlohmann::ordered_json channels = nlohmann::ordered_json::array();
    for (std::size_t c = 0; c < s.path_sensitivity_k_per_mm.size(); ++c) {
      channels.push_back({{"channel", night.radiometer.config.channels[c].name},
                          {"path_sensitivity_k_per_mm", s.path_sensitivity_k_per_mm[c]}});
    }
    j["channels"] = channels;
    j["windows"] = retrieval.windows;
    j["window_s"] = o.window_s.value_or(60.0);
    j["reused"] = p.result.retrieval_reused;
    j["site"] = site_json(p.result.site);
    j["notes"] = p.result.notes;
    j["retrieval_seconds"] = retrieval.seconds;
    j["total_seconds"] = total_s;
    j["output"] = o.output_file;
    print_json(j);
    return;
  }
  print_notes(p.result);
  std::cout << "retrieved " << s.antennas << " antennas x " << retrieval.samples << " samples ("
            << s.samples_flagged << " flagged), " << retrieval.windows << " coefficient windows of "
            << fixed(window_s, 0) << " s -> " << o.output_file << "\n"
            << "PWV median " << fixed(s.pwv_median_mm, 3)
            << " mm (10-90 %: " << fixed(s.pwv_p10_mm, 3) << " - " << fixed(s.pwv_p90_mm, 3)
            << "), chi2/dof median " << fixed(s.chi2_per_dof_median, 2) << "\n";
  Table table({"channel", "path_sensitivity_k_per_mm"});
  for (std::size_t c = 0; c < s.path_sensitivity_k_per_mm.size(); ++c) {
    table.add_row(
        {night.radiometer.config.channels[c].name, fixed(s.path_sensitivity_k_per_mm[c], 4)});
  }
  table.print_text(std::cout);
  std::cout << "time: retrieval " << fixed(retrieval.seconds, 2) << " s, total "
            << fixed(total_s, 2) << " s\n";
}

}  // namespace

void add_retrieve_command(CLI::App& app) {
  auto options = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand(
      "retrieve", "Retrieve PWV and path coefficients for every antenna of a night");
  add_common(*cmd, *options);
  cmd->add_flag("--fit-liquid", options->fit_liquid, "Fit cloud liquid water in the window fits");
  cmd->add_flag("--fit-temperature", options->fit_temperature,
                "Fit a profile temperature offset in the window fits");
  cmd->callback([options] { run_retrieve(*options); });
}

}  // namespace skyphase
