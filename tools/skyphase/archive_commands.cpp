// skyphase import and skyphase export: MeasurementSets in and out (built with casacore).
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>
#include <sstream>

#include "commands.hpp"
#include "output.hpp"
#include "wvr/error.hpp"
#include "wvr/measurement_set.hpp"
#include "wvr/night_file.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/site_config.hpp"

namespace skyphase {
namespace {

struct ImportOptions {
  std::string ms;
  std::string output_file;
  std::string brightness;
  std::string radiometer_window;
  std::string radiometer_file;
  int reference_antenna = -1;
  std::vector<double> array_centre;
  std::string clock_offset = "none";
  double clock_search_s = 6.0;
  bool overwrite = false;
};

void run_import(const ImportOptions& o) {
  wvr::MsImportOptions options;
  options.brightness = wvr::parse_brightness_convention(o.brightness);
  options.radiometer_window = o.radiometer_window;
  if (!o.radiometer_file.empty())
    options.radiometer = wvr::load_radiometer_config(o.radiometer_file);
  options.reference_antenna = o.reference_antenna;
  if (!o.array_centre.empty()) {
    if (o.array_centre.size() != 3)
      throw wvr::InvalidInput("--array-centre needs lat_deg,lon_deg,height_m (3 values)");
    options.array_centre =
        std::array<double, 3>{o.array_centre[0], o.array_centre[1], o.array_centre[2]};
  }
  options.clock_search_halfwidth_s = o.clock_search_s;
  if (o.clock_offset == "none") {
    options.clock_offset = wvr::ClockOffsetMode::kNone;
  } else if (o.clock_offset == "night") {
    options.clock_offset = wvr::ClockOffsetMode::kNight;
  } else if (o.clock_offset == "per-antenna") {
    options.clock_offset = wvr::ClockOffsetMode::kPerAntenna;
  } else {
    std::size_t used = 0;
    double seconds = 0.0;
    try {
      seconds = std::stod(o.clock_offset, &used);
    } catch (const std::exception&) {
      used = 0;
    }
    if (used == 0 || used != o.clock_offset.size())
      throw wvr::InvalidInput("--clock-offset = '" + o.clock_offset +
                              "' is not none, night, per-antenna or a number of seconds");
    options.clock_offset = wvr::ClockOffsetMode::kGiven;
    options.clock_offset_s = seconds;
  }
  const wvr::MsImport imported = wvr::import_measurement_set(o.ms, options);
  wvr::NightWriteOptions write_options;
  write_options.overwrite_output = o.overwrite;
  wvr::write_night(imported.night, o.output_file, write_options);
  for (const std::string& note : imported.notes) std::cerr << "note: " << note << "\n";
  const wvr::Night& night = imported.night;
  std::size_t calibrators = 0;
  for (const wvr::Scan& s : night.scans) calibrators += s.intent == wvr::ScanIntent::kCalibrator;
  std::cout << "imported " << o.ms << ": " << night.antenna_count() << " antennas, "
            << night.time_count() << " radiometer samples of " << night.channel_count()
            << " channels, " << night.scans.size() << " scans (" << calibrators << " calibrator), "
            << night.calibrator_phases.time_s.size() << " calibrator phases, "
            << night.weather.time_s.size() << " weather samples\n";
  if (!imported.clock_offsets.empty()) {
    for (std::size_t a = 0; a < night.antenna_count(); ++a) {
      const wvr::ClockOffset& c = imported.clock_offsets[a];
      if (a > 0 && o.clock_offset != "per-antenna") break;
      std::cout << "clock offset "
                << (o.clock_offset == "per-antenna" ? night.array.antenna_names[a] + " " : "")
                << fixed(c.offset_s, 3) << " s"
                << (c.estimated
                        ? " +/- " + fixed(c.sigma_s, 3) + " s from " + std::to_string(c.rows) +
                              " calibrator rows"
                        : (options.clock_offset == wvr::ClockOffsetMode::kGiven
                               ? " (given)"
                               : " (not estimated: too few rows or no clear minimum; 0 applied)"))
                << "\n";
    }
  }
  std::cout << "-> " << o.output_file << "\n";
}

struct ExportOptions {
  std::string night_file;
  std::string ms;
  std::string output;
  std::string gain_table;
  std::string radiometer_window;
  std::string site_file;
  bool overwrite = false;
};

void run_export(const ExportOptions& o) {
  if (o.output.empty() && o.gain_table.empty())
    throw wvr::InvalidInput("export needs -o OUT.ms, --gain-table OUT.gains, or both");
  // Both outputs are refused before either is written, so a refusal leaves no half-done export.
  for (const std::string& path : {o.output, o.gain_table})
    if (!path.empty() && !o.overwrite && std::filesystem::exists(path))
      throw wvr::InvalidInput("output " + path + " exists (--overwrite not set)");
  const wvr::Night night = wvr::read_night(o.night_file);
  std::optional<wvr::SiteConfig> site;
  if (!o.site_file.empty()) site = wvr::load_site_config(o.site_file);
  if (!o.output.empty()) {
    wvr::MsExportOptions options;
    options.site = site;
    options.overwrite_output = o.overwrite;
    const wvr::MsExport result = wvr::export_measurement_set(night, o.ms, o.output, options);
    for (const std::string& note : result.notes) std::cerr << "note: " << note << "\n";
    std::cout << "exported " << result.rows << " rows (" << result.rows_flagged
              << " cross-correlation rows flagged for want of a correction)\n"
              << "-> " << o.output << "\n";
  }
  if (!o.gain_table.empty()) {
    wvr::GainTableOptions options;
    options.site = site;
    options.radiometer_window = o.radiometer_window;
    options.overwrite_output = o.overwrite;
    const wvr::GainTableExport result = wvr::export_gain_table(night, o.ms, o.gain_table, options);
    for (const std::string& note : result.notes) std::cerr << "note: " << note << "\n";
    std::string windows;
    for (int w : result.spectral_windows)
      windows += (windows.empty() ? "" : ",") + std::to_string(w);
    std::cout << "gain table: " << result.solutions << " solutions (spectral windows " << windows
              << "; " << result.solutions_flagged << " flagged for want of a correction)\n"
              << "-> " << o.gain_table << "\n";
  }
}

}  // namespace

void add_import_command(CLI::App& app) {
  auto options = std::make_shared<ImportOptions>();
  CLI::App* cmd = app.add_subcommand("import", "Read a MeasurementSet into a night file");
  cmd->add_option("ms", options->ms, "MeasurementSet (directory)")->required();
  cmd->add_option("-o,--output", options->output_file, "Night file to write (HDF5)")->required();
  cmd->add_option("--brightness", options->brightness,
                  "How the radiometer window stores brightness: rayleigh-jeans or planck")
      ->required();
  cmd->add_option("--radiometer-window", options->radiometer_window,
                  "Radiometer spectral window (index or NAME); default: the one near 183.31 GHz");
  cmd->add_option("--radiometer", options->radiometer_file,
                  "Radiometer file (TOML) replacing the channel layout of SPECTRAL_WINDOW");
  cmd->add_option("--reference-antenna", options->reference_antenna,
                  "Keep only calibrator baselines to this antenna (index); default all");
  cmd->add_option("--array-centre", options->array_centre,
                  "lat_deg,lon_deg,height_m of the east/north/up origin; default the mean antenna")
      ->delimiter(',');
  cmd->add_option("--clock-offset", options->clock_offset,
                  "Radiometer clock offset: none, night, per-antenna (estimated) or seconds")
      ->capture_default_str();
  cmd->add_option("--clock-search-s", options->clock_search_s, "Largest offset searched (s)")
      ->capture_default_str();
  cmd->add_flag("--overwrite", options->overwrite, "Replace an existing output file");
  cmd->callback([options] { run_import(*options); });
}

void add_export_command(CLI::App& app) {
  auto options = std::make_shared<ExportOptions>();
  CLI::App* cmd =
      app.add_subcommand("export",
                         "Write a night's phase correction into a new MeasurementSet and/or a "
                         "gain table (at least one of -o and --gain-table)");
  cmd->add_option("night", options->night_file, "Corrected night file (HDF5)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--ms", options->ms, "The MeasurementSet the night was imported from")
      ->required();
  cmd->add_option("-o,--output", options->output,
                  "New MeasurementSet to write (a copy with CORRECTED_DATA)");
  cmd->add_option("--gain-table", options->gain_table,
                  "Antenna-based gain table to write instead of (or besides) -o, in casacore's "
                  "calibration-table layout, for general-purpose calibration software to apply");
  cmd->add_option("--radiometer-window", options->radiometer_window,
                  "Spectral window (index or NAME) left out of the gain table; default: the one "
                  "near 183.31 GHz");
  cmd->add_option("--site", options->site_file, "Site file whose dispersion scales the phase");
  cmd->add_flag("--overwrite", options->overwrite, "Replace existing outputs");
  cmd->callback([options] { run_export(*options); });
}

}  // namespace skyphase
