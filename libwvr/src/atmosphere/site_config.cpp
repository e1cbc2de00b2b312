#include "wvr/site_config.hpp"

#include "core/config_text.hpp"
#include "wvr/error.hpp"

namespace wvr {

SiteConfig parse_site_config(const std::string& toml_text, const std::string& source_name) {
  const toml::table table = detail::parse_toml(toml_text, source_name);
  auto read = [&](const toml::table& t, const std::string& prefix, const char* key, double& out) {
    const toml::node* node = t.get(key);
    if (node == nullptr) return false;
    if (auto v = node->value<double>()) {
      out = *v;
      return true;
    }
    throw InvalidInput(source_name + ": " + prefix + key + " is not a number");
  };
  SiteConfig config;
  config.name = table["name"].value_or(std::string("unnamed site"));
  SiteParameters& p = config.parameters;
  read(table, "", "latitude_deg", config.latitude_deg);
  read(table, "", "altitude_m", p.altitude_m);
  read(table, "", "surface_temperature_k", p.surface_temperature_k);
  read(table, "", "surface_pressure_hpa", p.surface_pressure_hpa);
  read(table, "", "lapse_rate_k_per_km", p.lapse_rate_k_per_km);
  read(table, "", "tropopause_m", p.tropopause_m);
  read(table, "", "water_scale_height_m", p.water_scale_height_m);
  double value = 0.0;
  if (read(table, "", "pwv_mm", value)) p.pwv_mm = value;
  if (read(table, "", "surface_relative_humidity_pct", value))
    p.surface_relative_humidity_pct = value;
  if (const toml::table* inv = table["inversion"].as_table()) {
    Inversion inversion;
    read(*inv, "inversion.", "base_above_ground_m", inversion.base_above_ground_m);
    read(*inv, "inversion.", "depth_m", inversion.depth_m);
    read(*inv, "inversion.", "temperature_jump_k", inversion.temperature_jump_k);
    p.inversion = inversion;
  }
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
