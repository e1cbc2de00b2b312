#include "wvr/site_config.hpp"

#include "core/config_text.hpp"
#include "wvr/error.hpp"

namespace wvr {

SiteConfig parse_site_config(const std::string& toml_text, const std::string& source_name) {
  const toml::table table = detail::parse_toml(toml_text, source_name);
  detail::StrictTable top(table, source_name, "");
  SiteConfig config;
  config.name = top.text("name", "unnamed site");
  SiteParameters& p = config.parameters;
  config.latitude_deg = top.number("latitude_deg", config.latitude_deg);
  p.altitude_m = top.number("altitude_m", p.altitude_m);
  p.surface_temperature_k = top.number("surface_temperature_k", p.surface_temperature_k);
  p.surface_pressure_hpa = top.number("surface_pressure_hpa", p.surface_pressure_hpa);
  p.lapse_rate_k_per_km = top.number("lapse_rate_k_per_km", p.lapse_rate_k_per_km);
  p.tropopause_m = top.number("tropopause_m", p.tropopause_m);
  p.water_scale_height_m = top.number("water_scale_height_m", p.water_scale_height_m);
  if (const auto pwv_mm = top.optional_number("pwv_mm")) p.pwv_mm = *pwv_mm;
  if (const auto humidity_pct = top.optional_number("surface_relative_humidity_pct")) {
    p.surface_relative_humidity_pct = *humidity_pct;
  }
  if (top.node("inversion") != nullptr) {
    detail::StrictTable inv(top.sub_table("inversion"), source_name, "inversion.");
    Inversion inversion;
    inversion.base_above_ground_m =
        inv.number("base_above_ground_m", inversion.base_above_ground_m);
    inversion.depth_m = inv.number("depth_m", inversion.depth_m);
    inversion.temperature_jump_k = inv.number("temperature_jump_k", inversion.temperature_jump_k);
    inv.reject_unknown_keys();
    p.inversion = inversion;
  }
  top.reject_unknown_keys();
  try {
    require_in_range("latitude_deg", config.latitude_deg, -90.0, 90.0, "deg");
    p.validate();
  } catch (const InvalidInput& error) {
    throw InvalidInput(source_name + ": " + error.what());
  }
  return config;
}

SiteConfig load_site_config(const std::filesystem::path& path) {
  return parse_site_config(detail::read_text_file(path, "site file"), path.string());
}

}  // namespace wvr
