#pragma once
// Site description files (TOML).
//
//   name = "Cerro Viento plateau (fictional)"
//   altitude_m = 4850.0
//   latitude_deg = -24.0
//   surface_temperature_k = 270.0
//   surface_pressure_hpa = 565.0
//   lapse_rate_k_per_km = 6.5
//   tropopause_m = 16500.0
//   water_scale_height_m = 1500.0
//   pwv_mm = 1.0                        # or surface_relative_humidity_pct = 40.0
//   [inversion]                         # optional
//   base_above_ground_m = 200.0
//   depth_m = 300.0
//   temperature_jump_k = 4.0
//
// Missing fields keep the SiteParameters defaults.

#include <filesystem>
#include <string>

#include "wvr/atmosphere.hpp"

namespace wvr {

struct SiteConfig {
  std::string name;
  double latitude_deg = 0.0;
  SiteParameters parameters;
};

// Parses and validates; throws InvalidInput naming the source and the field.
SiteConfig parse_site_config(const std::string& toml_text,
                             const std::string& source_name = "<string>");
SiteConfig load_site_config(const std::filesystem::path& path);

}  // namespace wvr
