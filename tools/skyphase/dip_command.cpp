// skyphase dip: sky dips fitted with the layered model and the single-slab form, read from a
// CSV file or simulated from the site (with chosen offsets, gains and noise) and fitted back.
#include <fstream>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "model_option.hpp"
#include "output.hpp"
#include "site_options.hpp"
#include "wvr/error.hpp"
#include "wvr/sky_dip.hpp"

namespace skyphase {
namespace {

struct DipOptions {
  SiteOptions site;
  std::string radiometer_file;
  std::string input_file;  // empty: simulate
  std::optional<double> pwv_mm;
  std::vector<std::string> antennas = {"dip1"};
  std::vector<double> offset_k;
  std::vector<double> gain;
  std::string write_csv;
  wvr::SkyDipSimulationOptions simulation;
  wvr::SkyDipFitOptions fit;
  Format format = Format::kTable;
};

nlohmann::ordered_json to_json(const wvr::SkyDipFit& f) {
  nlohmann::ordered_json channels = nlohmann::ordered_json::array();
  for (const wvr::SkyDipChannelFit& c : f.channels) {
    channels.push_back({{"channel", c.channel},
                        {"offset_k", c.offset_k},
                        {"offset_sigma_k", c.offset_sigma_k},
                        {"gain", c.gain},
                        {"gain_sigma", c.gain_sigma},
                        {"gain_data_share", c.gain_data_share},
                        {"zenith_opacity_np", c.zenith_opacity_np},
                        {"zenith_opacity_sigma_np", c.zenith_opacity_sigma_np},
                        {"effective_temperature_k", c.effective_temperature_k},
                        {"effective_rj_temperature_k", c.effective_rj_temperature_k},
                        {"slab_opacity_np", c.slab_opacity_np},
                        {"slab_opacity_sigma_np", c.slab_opacity_sigma_np},
                        {"slab_temperature_k", c.slab_temperature_k},
                        {"slab_temperature_sigma_k", c.slab_temperature_sigma_k},
                        {"slab_temperature_data_share", c.slab_temperature_data_share},
                        {"slab_offset_k", c.slab_offset_k},
                        {"slab_offset_sigma_k", c.slab_offset_sigma_k},
                        {"slab_rms_k", c.slab_rms_k},
                        {"slab_opacity_difference", c.slab_opacity_difference},
                        {"note", c.note}});
  }
  return {{"antenna", f.antenna},
          {"model", f.model},
          {"pwv_mm", f.pwv_mm},
          {"pwv_sigma_mm", f.pwv_sigma_mm},
          {"reduced_chi_square", f.reduced_chi_square},
          {"rms_k", f.rms_k},
          {"samples", f.samples},
          {"elevations", f.elevations},
          {"converged", f.converged},
          {"airmass_model", f.airmass_model},
          {"channels", channels},
          {"notes", f.notes}};
}

void print_fit(const wvr::SkyDipFit& f) {
  std::cout << "# " << f.antenna << ": PWV " << with_uncertainty(f.pwv_mm, f.pwv_sigma_mm)
            << " mm, chi2/dof " << fixed(f.reduced_chi_square, 2) << ", rms " << fixed(f.rms_k, 3)
            << " K, " << f.samples << " samples at " << f.elevations << " elevations (" << f.model
            << ")\n";
  Table table({"channel", "offset_k", "gain", "zenith_opacity_np", "effective_temperature_k",
               "slab_opacity_np", "slab_temperature_k", "slab_difference_pct"});
  for (const wvr::SkyDipChannelFit& c : f.channels) {
    table.add_row({c.channel, with_uncertainty(c.offset_k, c.offset_sigma_k),
                   with_uncertainty(c.gain, c.gain_sigma),
                   with_uncertainty(c.zenith_opacity_np, c.zenith_opacity_sigma_np),
                   fixed(c.effective_temperature_k, 1),
                   with_uncertainty(c.slab_opacity_np, c.slab_opacity_sigma_np),
                   with_uncertainty(c.slab_temperature_k, c.slab_temperature_sigma_k),
                   fixed(100.0 * c.slab_opacity_difference, 2)});
  }
  table.print_text(std::cout);
  for (const std::string& note : f.notes) std::cout << "# " << note << "\n";
}

void run_dip(const DipOptions& o) {
  const wvr::RadiometerConfig radiometer = wvr::load_radiometer_config(o.radiometer_file);
  const wvr::AtmosphereProfile profile = o.site.profile(o.pwv_mm);
  std::vector<wvr::SkyDip> dips;
  if (!o.input_file.empty()) {
    dips = wvr::read_sky_dip_csv(o.input_file, radiometer);
  } else {
    std::vector<wvr::SkyDipUnit> units;
    for (const std::string& antenna : o.antennas) units.push_back({antenna, o.offset_k, o.gain});
    wvr::SkyDipSimulationOptions simulation = o.simulation;
    simulation.absorption_model = o.fit.absorption_model;
    dips = wvr::simulate_sky_dips(profile, radiometer, units, simulation);
  }
  if (!o.write_csv.empty()) {
    std::ofstream out(o.write_csv);
    if (!out) throw wvr::InvalidInput("--write-csv '" + o.write_csv + "' cannot be written");
    wvr::write_sky_dip_csv(out, dips, radiometer);
  }
  nlohmann::ordered_json fits = nlohmann::ordered_json::array();
  for (const wvr::SkyDip& dip : dips) {
    wvr::SkyDipFit fit;
    try {
      fit = wvr::fit_sky_dip(dip, profile, radiometer, o.fit);
    } catch (const wvr::InvalidInput& e) {
      throw wvr::InvalidInput("antenna " + dip.antenna + ": " + e.what());
    }
    if (o.format == Format::kJson) {
      fits.push_back(to_json(fit));
    } else {
      print_fit(fit);
    }
  }
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j;
    j["source"] = o.input_file.empty() ? "simulated" : o.input_file;
    j["radiometer"] = radiometer.name;
    j["dips"] = fits;
    print_json(j);
  }
}

}  // namespace

void add_dip_command(CLI::App& app) {
  auto o = std::make_shared<DipOptions>();
  CLI::App* cmd = app.add_subcommand(
      "dip",
      "Fit sky dips (brightness against elevation) with the layered model and the single-slab "
      "form: PWV, zenith opacity, effective temperature, offset and gain per channel");
  cmd->add_option("--radiometer", o->radiometer_file, "Radiometer file (TOML)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--input", o->input_file,
                  "Dip CSV (time_s,antenna,elevation_deg,<channel>...); without it the dips are "
                  "simulated")
      ->check(CLI::ExistingFile);
  cmd->add_option("--pwv-mm", o->pwv_mm, "PWV of the simulated sky; the fit's starting point");
  cmd->add_option("--antenna", o->antennas, "Simulated units, comma separated")
      ->delimiter(',')
      ->capture_default_str();
  cmd->add_option("--offset-k", o->offset_k,
                  "Simulated offset (K): one value or one per channel, comma separated")
      ->delimiter(',');
  cmd->add_option("--gain", o->gain, "Simulated gain: one value or one per channel")
      ->delimiter(',');
  cmd->add_option("--elevation-deg", o->simulation.elevation_deg,
                  "Simulated elevations in scan order (deg), comma separated")
      ->delimiter(',')
      ->capture_default_str();
  cmd->add_option("--dwell-s", o->simulation.dwell_s, "Time at each simulated elevation (s)")
      ->capture_default_str();
  cmd->add_option("--seed", o->simulation.seed, "Noise seed")->capture_default_str();
  cmd->add_flag("!--no-noise", o->simulation.add_noise, "Simulate without thermal noise");
  cmd->add_option("--write-csv", o->write_csv, "Also write the dips (read or simulated) as CSV");
  cmd->add_option("--gain-prior-sigma", o->fit.gain_prior_sigma,
                  "Width of the gains' prior around 1")
      ->capture_default_str();
  cmd->add_option("--slab-temperature-prior-sigma-k", o->fit.slab_temperature_prior_sigma_k,
                  "Width of the slab temperature's prior (K)")
      ->capture_default_str();
  cmd->add_option("--slab-tolerance", o->fit.slab_agreement_tolerance,
                  "Relative opacity difference above which the slab's disagreement is noted")
      ->capture_default_str();
  o->site.add_to(*cmd);
  add_absorption_model_option(*cmd, o->fit.absorption_model);
  add_format_option(*cmd, o->format);
  cmd->callback([o] { run_dip(*o); });
}

}  // namespace skyphase
