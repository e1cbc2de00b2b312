// skyphase channels: a radiometer's channel brightness and path sensitivity over a grid of
// PWV and elevation.
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "output.hpp"
#include "site_options.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/sky_model.hpp"

namespace skyphase {
namespace {

struct ChannelsOptions {
  SiteOptions site;
  std::string radiometer_file;
  std::vector<double> pwv_mm = {0.5, 1.0, 2.0, 4.0};
  std::vector<double> elevation_deg = {30.0, 60.0, 90.0};
  Format format = Format::kTable;
};

void run_channels(const ChannelsOptions& o) {
  const wvr::RadiometerConfig radiometer = wvr::load_radiometer_config(o.radiometer_file);
  const wvr::AtmosphereProfile base = o.site.profile(std::nullopt);
  const wvr::SkyModel sky;
  nlohmann::ordered_json points = nlohmann::ordered_json::array();
  const bool csv = o.format == Format::kCsv;
  Table table({"pwv_mm", "elevation_deg", "channel", "brightness_k", "d_brightness_d_pwv_k_per_mm",
               "path_sensitivity_k_per_mm", "wet_path_mm"});
  for (double pwv : o.pwv_mm) {
    const wvr::AtmosphereProfile profile = base.scaled_to_pwv(pwv);
    for (double el : o.elevation_deg) {
      const wvr::ChannelBrightness c = sky.channels(profile, radiometer, el);
      nlohmann::ordered_json point;
      point["pwv_mm"] = pwv;
      point["elevation_deg"] = el;
      point["brightness_k"] = c.brightness_k;
      point["d_brightness_d_pwv_k_per_mm"] = c.d_brightness_d_pwv_k_per_mm;
      point["d_brightness_d_temperature"] = c.d_brightness_d_temperature;
      point["path_sensitivity_k_per_mm"] = c.path_sensitivity_k_per_mm;
      point["wet_path_mm"] = c.wet_path_m * 1000.0;
      points.push_back(point);
      for (std::size_t k = 0; k < c.brightness_k.size(); ++k) {
        table.add_row(
            {csv ? exact(pwv) : fixed(pwv, 2), csv ? exact(el) : fixed(el, 1),
             radiometer.channels[k].name,
             csv ? exact(c.brightness_k[k]) : fixed(c.brightness_k[k], 3),
             csv ? exact(c.d_brightness_d_pwv_k_per_mm[k])
                 : fixed(c.d_brightness_d_pwv_k_per_mm[k], 3),
             csv ? exact(c.path_sensitivity_k_per_mm[k]) : fixed(c.path_sensitivity_k_per_mm[k], 4),
             csv ? exact(c.wet_path_m * 1000.0) : fixed(c.wet_path_m * 1000.0, 3)});
      }
    }
  }
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j;
    j["radiometer"] = radiometer.name;
    nlohmann::ordered_json names = nlohmann::ordered_json::array();
    for (const auto& ch : radiometer.channels) names.push_back(ch.name);
    j["channels"] = names;
    j["model"] = sky.absorption_model().name();
    j["points"] = points;
    std::cout << j.dump(2) << "\n";
  } else if (csv) {
    table.print_csv(std::cout);
  } else {
    std::cout << "# " << radiometer.name << " (LO " << radiometer.lo_freq_ghz << " GHz, "
              << radiometer.channels.size() << " channels) at " << o.site.describe(base) << "\n";
    std::cout << "# brightness: Rayleigh-Jeans-equivalent passband average (K); path "
                 "sensitivity: K per mm of slant wet path\n";
    table.print_text(std::cout);
  }
}

}  // namespace

void add_channels_command(CLI::App& app) {
  auto options = std::make_shared<ChannelsOptions>();
  CLI::App* cmd = app.add_subcommand(
      "channels", "Channel brightness and path sensitivity of a radiometer over PWV and elevation");
  cmd->add_option("--radiometer", options->radiometer_file, "Radiometer file (TOML)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--pwv-mm", options->pwv_mm, "PWV values (mm), comma separated")
      ->delimiter(',')
      ->capture_default_str();
  cmd->add_option("--elevation-deg", options->elevation_deg, "Elevations (deg), comma separated")
      ->delimiter(',')
      ->capture_default_str();
  options->site.add_to(*cmd);
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_channels(*options); });
}

}  // namespace skyphase
