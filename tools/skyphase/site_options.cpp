#include "site_options.hpp"

#include <iomanip>
#include <sstream>

#include "wvr/site_config.hpp"
#include "wvr/sounding.hpp"

namespace skyphase {

void SiteOptions::add_to(CLI::App& command) {
  command.add_option("--site", site_file, "Site file (TOML); individual options override it")
      ->check(CLI::ExistingFile);
  command
      .add_option("--sounding", sounding_file,
                  "CSV sounding (height_m, pressure_hpa, temperature_c, and dewpoint_c or "
                  "relative_humidity_pct); the antenna sits at the lowest level")
      ->check(CLI::ExistingFile);
  command.add_option("--altitude-m", altitude_m, "Site altitude above sea level (m)");
  command.add_option("--surface-temp-k", surface_temp_k, "Surface temperature (K)");
  command.add_option("--surface-pressure-hpa", surface_pressure_hpa, "Surface pressure (hPa)");
  command.add_option("--lapse-rate-k-per-km", lapse_rate_k_per_km,
                     "Tropospheric lapse rate (K/km)");
  command.add_option("--tropopause-m", tropopause_m, "Tropopause altitude above sea level (m)");
  command.add_option("--water-scale-height-m", water_scale_height_m,
                     "Water-vapour scale height (m)");
  command.add_option("--surface-humidity-pct", surface_humidity_pct,
                     "Surface relative humidity (%), instead of a PWV");
  command.add_option("--layers", layers, "Layer count of the vertical grid")->capture_default_str();
  command.add_option("--top-m", top_m, "Top of the modelled atmosphere above sea level (m)")
      ->capture_default_str();
}

wvr::AtmosphereProfile SiteOptions::profile(std::optional<double> pwv_mm) const {
  wvr::LayerGrid grid;
  grid.layer_count = layers;
  grid.top_altitude_m = top_m;
  if (!sounding_file.empty()) {
    wvr::AtmosphereProfile profile =
        wvr::profile_from_sounding(wvr::read_sounding_csv(sounding_file), grid);
    return pwv_mm ? profile.scaled_to_pwv(*pwv_mm) : profile;
  }
  wvr::SiteParameters site;
  if (!site_file.empty()) site = wvr::load_site_config(site_file).parameters;
  if (altitude_m) site.altitude_m = *altitude_m;
  if (surface_temp_k) site.surface_temperature_k = *surface_temp_k;
  if (surface_pressure_hpa) site.surface_pressure_hpa = *surface_pressure_hpa;
  if (lapse_rate_k_per_km) site.lapse_rate_k_per_km = *lapse_rate_k_per_km;
  if (tropopause_m) site.tropopause_m = *tropopause_m;
  if (water_scale_height_m) site.water_scale_height_m = *water_scale_height_m;
  if (surface_humidity_pct) {
    site.surface_relative_humidity_pct = *surface_humidity_pct;
    site.pwv_mm.reset();
  }
  if (pwv_mm) {
    site.pwv_mm = *pwv_mm;
    site.surface_relative_humidity_pct.reset();
  }
  if (!site.pwv_mm && !site.surface_relative_humidity_pct) site.pwv_mm = 1.0;
  return wvr::make_parametric_profile(site, grid);
}

std::string SiteOptions::describe(const wvr::AtmosphereProfile& profile) const {
  std::ostringstream out;
  if (!sounding_file.empty()) {
    out << "sounding " << sounding_file;
  } else if (!site_file.empty()) {
    out << "site " << wvr::load_site_config(site_file).name;
  } else {
    out << "parametric site";
  }
  out << std::fixed << std::setprecision(0) << ", ground " << profile.ground_altitude_m() << " m, "
      << profile.size() << " layers to " << profile.top_altitude_m() << " m, PWV "
      << std::setprecision(3) << profile.pwv_mm() << " mm";
  return out.str();
}

}  // namespace skyphase
