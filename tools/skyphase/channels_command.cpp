// skyphase channels: a radiometer's channel brightness and path sensitivity over a grid of
// PWV and elevation; with --compare-models, both absorption models side by side and the
// model uncertainty of the path coefficients (wvr/path_model_uncertainty.hpp).
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "model_option.hpp"
#include "output.hpp"
#include "site_options.hpp"
#include "wvr/path_model_uncertainty.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/sky_model.hpp"

namespace skyphase {
namespace {

struct ChannelsOptions {
  SiteOptions site;
  std::string radiometer_file;
  std::vector<double> pwv_mm = {0.5, 1.0, 2.0, 4.0};
  std::vector<double> elevation_deg = {30.0, 60.0, 90.0};
  std::string absorption_model;
  bool compare_models = false;
  Format format = Format::kTable;
};

nlohmann::ordered_json header_json(const wvr::RadiometerConfig& radiometer) {
  nlohmann::ordered_json j;
  j["radiometer"] = radiometer.name;
  nlohmann::ordered_json names = nlohmann::ordered_json::array();
  for (const auto& ch : radiometer.channels) names.push_back(ch.name);
  j["channels"] = names;
  return j;
}

void print_header(const ChannelsOptions& o,
                  const wvr::RadiometerConfig& radiometer,
                  const wvr::AtmosphereProfile& base) {
  std::cout << "# " << radiometer.name << " (LO " << radiometer.lo_freq_ghz << " GHz, "
            << radiometer.channels.size() << " channels) at " << o.site.describe(base) << "\n";
  std::cout << "# brightness: Rayleigh-Jeans-equivalent passband average (K); path "
               "sensitivity: K per mm of slant wet path\n";
}

void run_one_model(const ChannelsOptions& o,
                   const wvr::RadiometerConfig& radiometer,
                   const wvr::AtmosphereProfile& base) {
  const wvr::SkyModel sky(wvr::make_absorption_model(o.absorption_model));
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
    nlohmann::ordered_json j = header_json(radiometer);
    j["model"] = sky.absorption_model().name();
    j["points"] = points;
    print_json(j);
  } else if (csv) {
    table.print_csv(std::cout);
  } else {
    print_header(o, radiometer, base);
    table.print_text(std::cout);
  }
}

// P.676 (the retrieval's default, model a) beside R17 (model b).
void run_comparison(const ChannelsOptions& o,
                    const wvr::RadiometerConfig& radiometer,
                    const wvr::AtmosphereProfile& base) {
  const wvr::SkyModel p676(wvr::make_absorption_model("p676"));
  const wvr::SkyModel r17(wvr::make_absorption_model("r17"));
  nlohmann::ordered_json points = nlohmann::ordered_json::array();
  const bool csv = o.format == Format::kCsv;
  auto number = [csv](double v, int digits) { return csv ? exact(v) : fixed(v, digits); };
  Table channels({"pwv_mm", "elevation_deg", "channel", "brightness_p676_k", "brightness_r17_k",
                  "path_sensitivity_p676_k_per_mm", "path_sensitivity_r17_k_per_mm",
                  "path_sensitivity_difference_pct"});
  Table combination(
      {"pwv_mm", "elevation_deg", "path_scale_r17_seen_by_p676", "path_model_uncertainty_pct"});
  for (double pwv : o.pwv_mm) {
    const wvr::AtmosphereProfile profile = base.scaled_to_pwv(pwv);
    for (double el : o.elevation_deg) {
      const wvr::PathCoefficientComparison d =
          wvr::compare_path_coefficients(profile, radiometer, el, p676, r17);
      nlohmann::ordered_json point;
      point["pwv_mm"] = pwv;
      point["elevation_deg"] = el;
      point["brightness_p676_k"] = d.brightness_a_k;
      point["brightness_r17_k"] = d.brightness_b_k;
      point["path_sensitivity_p676_k_per_mm"] = d.path_sensitivity_a_k_per_mm;
      point["path_sensitivity_r17_k_per_mm"] = d.path_sensitivity_b_k_per_mm;
      point["path_sensitivity_relative_difference"] = d.path_sensitivity_relative_difference;
      point["path_scale_r17_seen_by_p676"] = d.path_scale;
      point["path_model_uncertainty"] = std::abs(d.path_scale_relative_error);
      points.push_back(point);
      for (std::size_t k = 0; k < d.brightness_a_k.size(); ++k) {
        channels.add_row({number(pwv, 2), number(el, 1), radiometer.channels[k].name,
                          number(d.brightness_a_k[k], 3), number(d.brightness_b_k[k], 3),
                          number(d.path_sensitivity_a_k_per_mm[k], 4),
                          number(d.path_sensitivity_b_k_per_mm[k], 4),
                          number(100.0 * d.path_sensitivity_relative_difference[k], 2)});
      }
      combination.add_row({number(pwv, 2), number(el, 1), number(d.path_scale, 4),
                           number(100.0 * std::abs(d.path_scale_relative_error), 2)});
    }
  }
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j = header_json(radiometer);
    j["model_a"] = p676.absorption_model().name();
    j["model_b"] = r17.absorption_model().name();
    j["points"] = points;
    print_json(j);
  } else if (csv) {
    channels.print_csv(std::cout);
  } else {
    print_header(o, radiometer, base);
    std::cout << "# p676: " << p676.absorption_model().name()
              << "; r17: " << r17.absorption_model().name() << "\n";
    channels.print_text(std::cout);
    std::cout << "\n# path model uncertainty: |sum_c w_c s_r17,c - 1|, w = minimum-variance "
                 "combination of the p676 sensitivities (the path coefficients' relative error "
                 "on an r17 sky)\n";
    combination.print_text(std::cout);
  }
}

void run_channels(const ChannelsOptions& o) {
  const wvr::RadiometerConfig radiometer = wvr::load_radiometer_config(o.radiometer_file);
  const wvr::AtmosphereProfile base = o.site.profile(std::nullopt);
  if (o.compare_models) {
    run_comparison(o, radiometer, base);
  } else {
    run_one_model(o, radiometer, base);
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
  add_absorption_model_option(*cmd, options->absorption_model);
  cmd->add_flag("--compare-models", options->compare_models,
                "Both absorption models side by side (p676 and r17) and the model uncertainty of "
                "the path coefficients");
  add_format_option(*cmd, options->format);
  cmd->callback([options] { run_channels(*options); });
}

}  // namespace skyphase
