// skyphase absorption: specific attenuation of one gas state (ITU-R P.676 Annex 1, or the
// Rosenkranz 2017 water vapour with P.676 oxygen).
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "model_option.hpp"
#include "output.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"

namespace skyphase {
namespace {

struct AbsorptionOptions {
  std::vector<double> freq_ghz;
  double dry_pressure_hpa = 1013.25;
  double temp_k = 288.15;
  double vapour_density_g_m3 = 7.5;
  std::string absorption_model;
  Format format = Format::kTable;
};

void run_absorption(const AbsorptionOptions& o) {
  wvr::require_in_range("dry_pressure_hpa", o.dry_pressure_hpa, 0.0, 1200.0, "hPa");
  wvr::require_in_range("temp_k", o.temp_k, 100.0, 400.0, "K");
  wvr::require_in_range("vapour_density_g_m3", o.vapour_density_g_m3, 0.0, 100.0, "g/m^3");
  for (std::size_t i = 0; i < o.freq_ghz.size(); ++i) {
    wvr::require_in_range("freq_ghz[" + std::to_string(i) + "]", o.freq_ghz[i], 1.0, 1000.0, "GHz");
  }
  // P.676 Annex 1 convention: p is the dry-air pressure and e = rho T / 216.7 hPa.
  const wvr::GasState state{o.dry_pressure_hpa, o.vapour_density_g_m3 * o.temp_k / 216.7, o.temp_k};
  const auto model = wvr::make_absorption_model(o.absorption_model);
  std::vector<double> dry(o.freq_ghz.size()), water(o.freq_ghz.size());
  model->absorption(o.freq_ghz, state, dry, water);
  std::vector<double> oxygen_db, water_db, total_db;
  for (std::size_t i = 0; i < dry.size(); ++i) {
    oxygen_db.push_back(wvr::db_per_km_from_np_per_m(dry[i]));
    water_db.push_back(wvr::db_per_km_from_np_per_m(water[i]));
    total_db.push_back(oxygen_db.back() + water_db.back());
  }
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j;
    j["freq_ghz"] = o.freq_ghz;
    j["gamma_oxygen_db_per_km"] = oxygen_db;
    j["gamma_water_db_per_km"] = water_db;
    j["gamma_total_db_per_km"] = total_db;
    j["dry_pressure_hpa"] = o.dry_pressure_hpa;
    j["temp_k"] = o.temp_k;
    j["vapour_density_g_m3"] = o.vapour_density_g_m3;
    j["model"] = model->name();
    print_json(j);
    return;
  }
  const bool csv = o.format == Format::kCsv;
  Table table(
      {"freq_ghz", "gamma_oxygen_db_per_km", "gamma_water_db_per_km", "gamma_total_db_per_km"});
  for (std::size_t i = 0; i < dry.size(); ++i) {
    table.add_row({csv ? exact(o.freq_ghz[i]) : fixed(o.freq_ghz[i], 3),
                   csv ? exact(oxygen_db[i]) : fixed(oxygen_db[i], 6),
                   csv ? exact(water_db[i]) : fixed(water_db[i], 6),
                   csv ? exact(total_db[i]) : fixed(total_db[i], 6)});
  }
  if (csv) {
    table.print_csv(std::cout);
  } else {
    std::cout << "# " << model->name() << ": dry pressure " << o.dry_pressure_hpa << " hPa, "
              << o.temp_k << " K, water vapour " << o.vapour_density_g_m3 << " g/m^3\n";
    table.print_text(std::cout);
  }
}

}  // namespace

void add_absorption_command(CLI::App& app) {
  auto options = std::make_shared<AbsorptionOptions>();
  CLI::App* cmd = app.add_subcommand(
      "absorption", "Specific attenuation (dB/km) of oxygen and water vapour for one gas state");
  cmd->add_option("--freq-ghz", options->freq_ghz, "Frequencies (GHz), comma separated, 1-1000")
      ->delimiter(',')
      ->required();
  cmd->add_option("--dry-pressure-hpa", options->dry_pressure_hpa, "Dry-air pressure (hPa)")
      ->capture_default_str();
  cmd->add_option("--temp-k", options->temp_k, "Temperature (K)")->capture_default_str();
  cmd->add_option("--vapour-density-g-m3", options->vapour_density_g_m3,
                  "Water-vapour density (g/m^3)")
      ->capture_default_str();
  add_absorption_model_option(*cmd, options->absorption_model);
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_absorption(*options); });
}

}  // namespace skyphase
