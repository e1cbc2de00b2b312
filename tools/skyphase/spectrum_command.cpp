// skyphase spectrum: sky brightness, opacity and transmission at a list of frequencies.
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "model_option.hpp"
#include "output.hpp"
#include "site_options.hpp"
#include "wvr/sky_model.hpp"

namespace skyphase {
namespace {

struct SpectrumOptions {
  SiteOptions site;
  std::vector<double> freq_ghz;
  std::optional<double> pwv_mm;
  double elevation_deg = 90.0;
  std::string absorption_model;
  Format format = Format::kTable;
};

void run_spectrum(const SpectrumOptions& o) {
  const wvr::AtmosphereProfile profile = o.site.profile(o.pwv_mm);
  const wvr::SkySpectrum s = wvr::SkyModel(wvr::make_absorption_model(o.absorption_model))
                                 .spectrum(profile, o.freq_ghz, o.elevation_deg);
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j;
    j["freq_ghz"] = s.freq_ghz;
    j["brightness_k"] = s.brightness_k;
    j["rj_brightness_k"] = s.rj_brightness_k;
    j["opacity_np"] = s.opacity_np;
    j["transmission"] = s.transmission;
    j["pwv_mm"] = s.pwv_mm;
    j["elevation_deg"] = s.elevation_deg;
    j["model"] = s.model;
    print_json(j);
    return;
  }
  Table table({"freq_ghz", "brightness_k", "rj_brightness_k", "opacity_np", "transmission"});
  const bool csv = o.format == Format::kCsv;
  for (std::size_t i = 0; i < s.freq_ghz.size(); ++i) {
    table.add_row({csv ? exact(s.freq_ghz[i]) : fixed(s.freq_ghz[i], 3),
                   csv ? exact(s.brightness_k[i]) : fixed(s.brightness_k[i], 3),
                   csv ? exact(s.rj_brightness_k[i]) : fixed(s.rj_brightness_k[i], 3),
                   csv ? exact(s.opacity_np[i]) : fixed(s.opacity_np[i], 5),
                   csv ? exact(s.transmission[i]) : fixed(s.transmission[i], 5)});
  }
  if (csv) {
    table.print_csv(std::cout);
  } else {
    std::cout << "# " << o.site.describe(profile) << ", elevation " << o.elevation_deg << " deg, "
              << s.model << "\n";
    std::cout << "# brightness_k: Planck brightness temperature; rj_brightness_k: "
                 "Rayleigh-Jeans-equivalent (radiance) brightness\n";
    table.print_text(std::cout);
  }
}

}  // namespace

void add_spectrum_command(CLI::App& app) {
  auto options = std::make_shared<SpectrumOptions>();
  CLI::App* cmd = app.add_subcommand(
      "spectrum", "Sky brightness, opacity and transmission at a list of frequencies");
  cmd->add_option("--freq-ghz", options->freq_ghz, "Frequencies (GHz), comma separated, 1-1000")
      ->delimiter(',')
      ->required();
  cmd->add_option("--pwv-mm", options->pwv_mm, "Precipitable water vapour (mm)");
  cmd->add_option("--elevation-deg", options->elevation_deg, "Elevation (deg, 5-90)")
      ->capture_default_str();
  options->site.add_to(*cmd);
  add_absorption_model_option(*cmd, options->absorption_model);
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_spectrum(*options); });
}

}  // namespace skyphase
