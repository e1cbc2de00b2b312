#pragma once
// Site and profile options shared by skyphase subcommands: a site file, individual overrides
// and a sounding.

#include <CLI/CLI.hpp>
#include <optional>
#include <string>

#include "wvr/atmosphere.hpp"

namespace skyphase {

struct SiteOptions {
  std::string site_file;
  std::string sounding_file;
  std::optional<double> altitude_m;
  std::optional<double> surface_temp_k;
  std::optional<double> surface_pressure_hpa;
  std::optional<double> lapse_rate_k_per_km;
  std::optional<double> tropopause_m;
  std::optional<double> water_scale_height_m;
  std::optional<double> surface_humidity_pct;
  int layers = wvr::LayerGrid{}.layer_count;
  double top_m = wvr::LayerGrid{}.top_altitude_m;

  // Registers the options on a subcommand. --pwv-mm is registered by each command since its
  // meaning (one value or a list) differs.
  void add_to(CLI::App& command);

  // The base profile: from the sounding when given (the antenna at its lowest level), else the
  // parametric site (defaults, then the site file, then individual options). `pwv_mm`, when
  // set, fixes the vapour column; a parametric site with no humidity anywhere gets 1 mm.
  wvr::AtmosphereProfile profile(std::optional<double> pwv_mm) const;
  // One-line description of where the profile came from.
  std::string describe(const wvr::AtmosphereProfile& profile) const;
};

}  // namespace skyphase
