// skyphase retrieve: per-sample PWV and per-window path coefficients for every antenna.
#include <chrono>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "output.hpp"
#include "wvr/night_file.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/site_config.hpp"

namespace skyphase {
namespace {

struct RetrieveOptions {
  std::string night_file;
  std::string output_file;
  std::string site_file;
  double window_s = 60.0;
  bool fit_liquid = false;
  bool fit_temperature = false;
  int threads = 0;
  bool overwrite = false;
  Format format = Format::kTable;
};

void run_retrieve(const RetrieveOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  const wvr::Night night = wvr::read_night(o.night_file);
  const wvr::SiteConfig site = wvr::load_site_config(o.site_file);
  wvr::NightRetrievalOptions options;
  options.coefficient_window_s = o.window_s;
  options.window_fit.fit_liquid = o.fit_liquid;
  options.window_fit.fit_temperature_offset = o.fit_temperature;
  options.threads = o.threads;
  const wvr::NightRetrieval retrieval = wvr::retrieve_night(night, site.parameters, options);
  wvr::NightWriteOptions write;
  write.overwrite_output = o.overwrite;
  write.replace_existing_results = true;
  wvr::add_result_group(o.night_file, o.output_file, wvr::to_result_group(retrieval, night), write);
  const double total_s =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  const wvr::NightRetrievalSummary s = wvr::summarize(retrieval);
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j;
    j["antennas"] = s.antennas;
    j["samples"] = s.samples;
    j["samples_flagged"] = s.samples_flagged;
    j["pwv_median_mm"] = s.pwv_median_mm;
    j["pwv_p10_mm"] = s.pwv_p10_mm;
    j["pwv_p90_mm"] = s.pwv_p90_mm;
    j["chi2_per_dof_median"] = s.chi2_per_dof_median;
    nlohmann::ordered_json channels = nlohmann::ordered_json::array();
    for (std::size_t c = 0; c < s.path_sensitivity_k_per_mm.size(); ++c) {
      channels.push_back({{"channel", night.radiometer.config.channels[c].name},
                          {"path_sensitivity_k_per_mm", s.path_sensitivity_k_per_mm[c]}});
    }
    j["path_sensitivity_k_per_mm"] = s.path_sensitivity_k_per_mm;
    j["channels"] = channels;
    j["windows"] = retrieval.windows;
    j["window_s"] = o.window_s;
    j["retrieval_seconds"] = retrieval.seconds;
    j["total_seconds"] = total_s;
    j["output"] = o.output_file;
    std::cout << j.dump(2) << "\n";
    return;
  }
  std::cout << "retrieved " << s.antennas << " antennas x " << retrieval.samples << " samples ("
            << s.samples_flagged << " flagged), " << retrieval.windows << " coefficient windows of "
            << o.window_s << " s -> " << o.output_file << "\n"
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
  auto options = std::make_shared<RetrieveOptions>();
  CLI::App* cmd = app.add_subcommand(
      "retrieve", "Retrieve PWV and path coefficients for every antenna of a night");
  cmd->add_option("night", options->night_file, "Night file (HDF5)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-o,--output", options->output_file,
                  "Night file to write with the retrieval results")
      ->required();
  cmd->add_option("--site", options->site_file,
                  "Site file (TOML) describing the atmosphere's shape")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--window-s", options->window_s,
                  "Coefficient window (s); the integration time gives a full fit per sample")
      ->capture_default_str();
  cmd->add_flag("--fit-liquid", options->fit_liquid, "Fit cloud liquid water in the window fits");
  cmd->add_flag("--fit-temperature", options->fit_temperature,
                "Fit a profile temperature offset in the window fits");
  cmd->add_option("--threads", options->threads, "Worker threads (0 = all cores)")
      ->capture_default_str();
  cmd->add_flag("--overwrite", options->overwrite, "Replace an existing output file");
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_retrieve(*options); });
}

}  // namespace skyphase
