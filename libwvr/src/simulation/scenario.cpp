#include "wvr/scenario.hpp"

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <limits>
#include <optional>
#include <sstream>

#include "core/config_text.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"

namespace wvr {

double TurbulenceSpec::factor_at(double time_s) const {
  if (schedule.empty()) return 1.0;
  if (time_s <= schedule.front().first) return schedule.front().second;
  if (time_s >= schedule.back().first) return schedule.back().second;
  auto it = std::upper_bound(schedule.begin(), schedule.end(), time_s,
                             [](double t, const auto& point) { return t < point.first; });
  const auto& [t1, f1] = *it;
  const auto& [t0, f0] = *(it - 1);
  return f0 + (f1 - f0) * (time_s - t0) / (t1 - t0);
}

double CloudEpisode::liquid_water_path_at(double time_s) const {
  if (time_s <= start_s || time_s >= stop_s) return 0.0;
  const double ramp = std::max(ramp_s, 1e-9);
  const double up = std::min(1.0, (time_s - start_s) / ramp);
  const double down = std::min(1.0, (stop_s - time_s) / ramp);
  return liquid_water_path_kg_m2 * std::min(up, down);
}

FaultKind fault_kind_from_string(const std::string& name) {
  if (name == "spike") return FaultKind::kSpike;
  if (name == "gain_drift") return FaultKind::kGainDrift;
  if (name == "stuck_channel") return FaultKind::kStuckChannel;
  if (name == "dead_channel") return FaultKind::kDeadChannel;
  if (name == "dropout") return FaultKind::kDropout;
  throw InvalidInput("fault kind = '" + name +
                     "' is not one of spike, gain_drift, stuck_channel, dead_channel, dropout");
}

std::string to_string(FaultKind kind) {
  switch (kind) {
    case FaultKind::kSpike:
      return "spike";
    case FaultKind::kGainDrift:
      return "gain_drift";
    case FaultKind::kStuckChannel:
      return "stuck_channel";
    case FaultKind::kDeadChannel:
      return "dead_channel";
    case FaultKind::kDropout:
      return "dropout";
  }
  return "unknown";
}

bool CalibrationErrorSpec::any() const {
  return offset_sigma_k != 0.0 || gain_sigma != 0.0 || offset_drift_sigma_k_per_hour != 0.0 ||
         gain_drift_sigma_per_hour != 0.0;
}

SiteParameters TrueSky::apply_to(const SiteParameters& site) const {
  SiteParameters out = site;
  if (lapse_rate_k_per_km) out.lapse_rate_k_per_km = *lapse_rate_k_per_km;
  if (water_scale_height_m) out.water_scale_height_m = *water_scale_height_m;
  if (inversion) out.inversion = *inversion;
  return out;
}

std::vector<std::pair<std::string, std::string>> TrueSky::describe() const {
  std::vector<std::pair<std::string, std::string>> out;
  auto number = [](double v) {
    std::ostringstream text;
    text << std::setprecision(10) << v;
    return text.str();
  };
  if (absorption_model != kDefaultAbsorptionModel)
    out.emplace_back("absorption_model", absorption_model);
  if (water_continuum_scale != 1.0)
    out.emplace_back("water_continuum_scale", number(water_continuum_scale));
  if (lapse_rate_k_per_km) out.emplace_back("lapse_rate_k_per_km", number(*lapse_rate_k_per_km));
  if (water_scale_height_m) out.emplace_back("water_scale_height_m", number(*water_scale_height_m));
  if (inversion) {
    out.emplace_back("inversion_base_above_ground_m", number(inversion->base_above_ground_m));
    out.emplace_back("inversion_depth_m", number(inversion->depth_m));
    out.emplace_back("inversion_temperature_jump_k", number(inversion->temperature_jump_k));
  }
  if (calibration.offset_sigma_k != 0.0)
    out.emplace_back("calibration_offset_sigma_k", number(calibration.offset_sigma_k));
  if (calibration.gain_sigma != 0.0)
    out.emplace_back("calibration_gain_sigma", number(calibration.gain_sigma));
  if (calibration.offset_drift_sigma_k_per_hour != 0.0) {
    out.emplace_back("calibration_offset_drift_sigma_k_per_hour",
                     number(calibration.offset_drift_sigma_k_per_hour));
  }
  if (calibration.gain_drift_sigma_per_hour != 0.0) {
    out.emplace_back("calibration_gain_drift_sigma_per_hour",
                     number(calibration.gain_drift_sigma_per_hour));
  }
  // In name order, the order a night file gives them back: a night read from its file equals
  // the night simulated.
  std::sort(out.begin(), out.end());
  return out;
}

std::size_t Scenario::time_count() const {
  return static_cast<std::size_t>(std::floor(duration_s / integration_s + 1e-9));
}

void Scenario::validate() const {
  require_in_range("duration_s", duration_s, 1.0, 7.0 * 86400.0, "s");
  require_in_range("integration_s", integration_s, 0.01, 600.0, "s");
  if (time_count() < 2) throw InvalidInput("duration_s / integration_s gives fewer than 2 samples");
  require_in_range("atmosphere.pwv_mm", pwv_mm, 0.0, 50.0, "mm");
  require_finite("atmosphere.pwv_drift_mm_per_hour", pwv_drift_mm_per_hour);
  const double end_pwv = pwv_mm + pwv_drift_mm_per_hour * duration_s / 3600.0;
  if (end_pwv < 0.0) {
    throw InvalidInput(describe_value("atmosphere.pwv_drift_mm_per_hour", pwv_drift_mm_per_hour) +
                       " drives the PWV below 0 before the night ends");
  }
  make_absorption_model(true_sky.absorption_model, 1.0, "true_sky.absorption_model");
  require_in_range("true_sky.water_continuum_scale", true_sky.water_continuum_scale, 0.0, 10.0);
  try {
    true_sky.apply_to(site.parameters).validate();
  } catch (const InvalidInput& e) {
    throw InvalidInput(std::string("true_sky: ") + e.what());
  }
  const CalibrationErrorSpec& cal = true_sky.calibration;
  require_in_range("true_sky.calibration.offset_sigma_k", cal.offset_sigma_k, 0.0, 50.0, "K");
  require_in_range("true_sky.calibration.gain_sigma", cal.gain_sigma, 0.0, 0.5);
  require_in_range("true_sky.calibration.offset_drift_sigma_k_per_hour",
                   cal.offset_drift_sigma_k_per_hour, 0.0, 50.0, "K/h");
  require_in_range("true_sky.calibration.gain_drift_sigma_per_hour", cal.gain_drift_sigma_per_hour,
                   0.0, 0.5, "1/h");
  require_in_range("source.declination_deg", source.declination_deg, -90.0, 90.0, "deg");
  require_in_range("source.start_hour_angle_h", source.start_hour_angle_h, -12.0, 12.0, "h");
  require_in_range("observing.obs_freq_ghz", observing.obs_freq_ghz, 1.0, 1000.0, "GHz");
  require_in_range("observing.calibrator_scan_s", observing.calibrator_scan_s, integration_s, 1e5,
                   "s");
  require_in_range("observing.target_scan_s", observing.target_scan_s, 0.0, 1e5, "s");
  require_in_range("observing.thermal_phase_noise_deg", observing.thermal_phase_noise_deg, 0.0,
                   180.0, "deg");
  require_in_range("screen_spacing_m", screen_spacing_m, 1.0, 200.0, "m");
  array.validate();
  radiometer.validate();
  site.parameters.validate();
  for (std::size_t i = 0; i < turbulence.size(); ++i) {
    try {
      validate_layer(turbulence[i].layer);
    } catch (const InvalidInput& e) {
      throw InvalidInput("turbulence[" + std::to_string(i) + "]: " + e.what());
    }
    for (std::size_t k = 1; k < turbulence[i].schedule.size(); ++k) {
      if (!(turbulence[i].schedule[k].first > turbulence[i].schedule[k - 1].first)) {
        throw InvalidInput("turbulence[" + std::to_string(i) + "].schedule times must increase");
      }
    }
    for (const auto& [t, f] : turbulence[i].schedule) {
      require_in_range("turbulence[" + std::to_string(i) + "].schedule factor", f, 0.0, 100.0);
      require_finite("turbulence[" + std::to_string(i) + "].schedule time_s", t);
    }
  }
  const int antennas = array.kind == LayoutKind::kExplicit
                           ? static_cast<int>(array.explicit_enu_m.size())
                           : array.antenna_count;
  for (std::size_t i = 0; i < clouds.size(); ++i) {
    const std::string p = "clouds[" + std::to_string(i) + "]";
    require_in_range(p + ".liquid_water_path_kg_m2", clouds[i].liquid_water_path_kg_m2, 0.0, 2.0,
                     "kg/m^2");
    require_in_range(p + ".stop_s", clouds[i].stop_s, clouds[i].start_s, 1e7, "s");
    require_in_range(p + ".ramp_s", clouds[i].ramp_s, 0.0, 1e5, "s");
  }
  for (std::size_t i = 0; i < faults.size(); ++i) {
    const std::string p = "faults[" + std::to_string(i) + "]";
    if (faults[i].antenna < 0 || faults[i].antenna >= antennas) {
      throw InvalidInput(p + ".antenna = " + std::to_string(faults[i].antenna) +
                         " is not an antenna index below " + std::to_string(antennas));
    }
    if (faults[i].channel < -1 ||
        faults[i].channel >= static_cast<int>(radiometer.channels.size())) {
      throw InvalidInput(p + ".channel = " + std::to_string(faults[i].channel) +
                         " is not a channel index (or -1 for all)");
    }
    require_in_range(p + ".stop_s", faults[i].stop_s, faults[i].start_s, 1e7, "s");
    require_finite(p + ".magnitude", faults[i].magnitude);
  }
}

namespace {

using detail::StrictTable;

std::vector<double> number_list(const toml::node* node, const std::string& where) {
  std::vector<double> out;
  const toml::array* list = node ? node->as_array() : nullptr;
  if (list == nullptr) throw InvalidInput(where + " is not a list of numbers");
  for (const toml::node& item : *list) {
    auto v = item.value<double>();
    if (!v) throw InvalidInput(where + " is not a list of numbers");
    out.push_back(*v);
  }
  return out;
}

// An integer that must fit an int without wrapping; its meaningful range is checked by
// Scenario::validate, which names it.
int int_value(StrictTable& t, const char* key, int fallback) {
  return static_cast<int>(
      t.integer(key, fallback, std::numeric_limits<int>::min(), std::numeric_limits<int>::max()));
}

void read_array(StrictTable& top, Scenario& s) {
  StrictTable array(top.sub_table("array"), top.source(), "array.");
  s.array.kind = layout_kind_from_string(array.text("layout", "extended"));
  s.array.antenna_count = int_value(array, "antenna_count", s.array.antenna_count);
  s.array.min_spacing_m = array.number("min_spacing_m", s.array.min_spacing_m);
  s.array.radius_m = array.number("radius_m", s.array.radius_m);
  if (const toml::node* positions = array.node("positions_enu_m")) {
    const toml::array* rows = positions->as_array();
    if (rows == nullptr) throw InvalidInput(array.where("positions_enu_m") + " is not a list");
    for (std::size_t i = 0; i < rows->size(); ++i) {
      const std::string where = array.where("positions_enu_m") + "[" + std::to_string(i) + "]";
      const std::vector<double> p = number_list(rows->get(i), where);
      if (p.size() != 3) throw InvalidInput(where + " needs 3 numbers (east, north, up)");
      s.array.explicit_enu_m.push_back({p[0], p[1], p[2]});
    }
  }
  array.reject_unknown_keys();
}

void read_atmosphere_and_true_sky(StrictTable& top, Scenario& s) {
  StrictTable atmosphere(top.sub_table("atmosphere"), top.source(), "atmosphere.");
  StrictTable true_sky(top.sub_table("true_sky"), top.source(), "true_sky.");
  s.pwv_mm = atmosphere.number("pwv_mm", s.pwv_mm);
  s.pwv_drift_mm_per_hour = atmosphere.number("pwv_drift_mm_per_hour", 0.0);
  s.cloud_base_above_ground_m =
      atmosphere.number("cloud_base_above_ground_m", s.cloud_base_above_ground_m);
  s.cloud_thickness_m = atmosphere.number("cloud_thickness_m", s.cloud_thickness_m);
  // [atmosphere] water_continuum_scale is the older spelling of [true_sky] water_continuum_scale.
  const std::optional<double> old_scale = atmosphere.optional_number("water_continuum_scale");
  const std::optional<double> scale = true_sky.optional_number("water_continuum_scale");
  if (old_scale && scale) {
    throw InvalidInput(top.source() +
                       ": atmosphere.water_continuum_scale and true_sky.water_continuum_scale "
                       "are both set; keep true_sky.water_continuum_scale");
  }
  s.true_sky.water_continuum_scale = scale.value_or(old_scale.value_or(1.0));
  atmosphere.reject_unknown_keys();

  s.true_sky.absorption_model = true_sky.text("absorption_model", s.true_sky.absorption_model);
  s.true_sky.lapse_rate_k_per_km = true_sky.optional_number("lapse_rate_k_per_km");
  s.true_sky.water_scale_height_m = true_sky.optional_number("water_scale_height_m");
  if (true_sky.node("inversion") != nullptr) {
    StrictTable inversion(true_sky.sub_table("inversion"), top.source(), "true_sky.inversion.");
    s.true_sky.inversion = Inversion{inversion.required_number("base_above_ground_m"),
                                     inversion.required_number("depth_m"),
                                     inversion.required_number("temperature_jump_k")};
    inversion.reject_unknown_keys();
  }
  StrictTable calibration(true_sky.sub_table("calibration"), top.source(), "true_sky.calibration.");
  CalibrationErrorSpec& cal = s.true_sky.calibration;
  cal.offset_sigma_k = calibration.number("offset_sigma_k", 0.0);
  cal.gain_sigma = calibration.number("gain_sigma", 0.0);
  cal.offset_drift_sigma_k_per_hour = calibration.number("offset_drift_sigma_k_per_hour", 0.0);
  cal.gain_drift_sigma_per_hour = calibration.number("gain_drift_sigma_per_hour", 0.0);
  calibration.reject_unknown_keys();
  true_sky.reject_unknown_keys();
}

void read_source_and_observing(StrictTable& top, Scenario& s) {
  StrictTable track(top.sub_table("source"), top.source(), "source.");
  s.source.declination_deg = track.number("declination_deg", s.source.declination_deg);
  s.source.start_hour_angle_h = track.number("start_hour_angle_h", s.source.start_hour_angle_h);
  track.reject_unknown_keys();

  StrictTable obs(top.sub_table("observing"), top.source(), "observing.");
  s.observing.obs_freq_ghz = obs.number("obs_freq_ghz", s.observing.obs_freq_ghz);
  s.observing.calibrator_scan_s = obs.number("calibrator_scan_s", s.observing.calibrator_scan_s);
  s.observing.target_scan_s = obs.number("target_scan_s", s.observing.target_scan_s);
  s.observing.calibrator = obs.text("calibrator", s.observing.calibrator);
  s.observing.target = obs.text("target", s.observing.target);
  s.observing.thermal_phase_noise_deg =
      obs.number("thermal_phase_noise_deg", s.observing.thermal_phase_noise_deg);
  const std::string baselines = obs.text("phase_baselines", "reference");
  if (baselines != "reference" && baselines != "all") {
    throw InvalidInput(obs.where("phase_baselines") + " = '" + baselines +
                       "' is not reference or all");
  }
  s.observing.all_baselines = baselines == "all";
  obs.reject_unknown_keys();
}

TurbulenceSpec read_turbulence(StrictTable& t) {
  TurbulenceSpec spec;
  const std::string kind = t.text("kind", "wet");
  if (kind != "wet" && kind != "dry") {
    throw InvalidInput(t.where("kind") + " = '" + kind + "' is not wet or dry");
  }
  spec.layer.kind = kind == "wet" ? LayerKind::kWet : LayerKind::kDry;
  spec.layer.height_m = t.number("height_m", spec.layer.height_m);
  spec.layer.thickness_m = t.number("thickness_m", spec.layer.thickness_m);
  spec.layer.outer_scale_m = t.number("outer_scale_m", spec.layer.outer_scale_m);
  spec.layer.wind_east_m_s = t.number("wind_east_m_s", spec.layer.wind_east_m_s);
  spec.layer.wind_north_m_s = t.number("wind_north_m_s", spec.layer.wind_north_m_s);
  spec.layer.reference_baseline_m = t.number("reference_baseline_m", 1000.0);
  spec.layer.path_rms_at_reference_m = t.required_number("path_rms_um") * 1e-6;
  spec.label = t.text("label", "");
  if (const toml::node* schedule = t.node("schedule")) {
    const toml::array* rows = schedule->as_array();
    if (rows == nullptr) throw InvalidInput(t.where("schedule") + " is not a list");
    for (const toml::node& row : *rows) {
      const std::vector<double> p = number_list(&row, t.where("schedule") + " entry");
      if (p.size() != 2) throw InvalidInput(t.where("schedule") + " entries are [time_s, factor]");
      spec.schedule.emplace_back(p[0], p[1]);
    }
  }
  t.reject_unknown_keys();
  return spec;
}

CloudEpisode read_cloud(StrictTable& t) {
  CloudEpisode c;
  c.start_s = t.required_number("start_s");
  c.stop_s = t.required_number("stop_s");
  c.liquid_water_path_kg_m2 = t.required_number("liquid_water_path_kg_m2");
  c.ramp_s = t.number("ramp_s", c.ramp_s);
  t.reject_unknown_keys();
  return c;
}

RadiometerFault read_fault(StrictTable& t) {
  RadiometerFault f;
  f.antenna = int_value(t, "antenna", -1);
  f.kind = fault_kind_from_string(t.text("kind", ""));
  f.start_s = t.required_number("start_s");
  f.stop_s = t.required_number("stop_s");
  f.channel = int_value(t, "channel", -1);
  f.magnitude = t.number("magnitude", 0.0);
  t.reject_unknown_keys();
  return f;
}

// Each [[key]] table through `read`, with "key[i]." naming it in messages.
template <typename Read>
void for_each_table(StrictTable& top, const char* key, Read read) {
  const std::vector<const toml::table*> tables = top.table_list(key);
  for (std::size_t i = 0; i < tables.size(); ++i) {
    StrictTable t(*tables[i], top.source(), std::string(key) + "[" + std::to_string(i) + "].");
    read(t);
  }
}

}  // namespace

Scenario parse_scenario(const std::string& toml_text,
                        const std::string& source,
                        const std::filesystem::path& base_directory) {
  const toml::table root = detail::parse_toml(toml_text, source);
  StrictTable top(root, source, "");
  Scenario s;
  s.name = top.text("name", "unnamed scenario");
  s.seed = static_cast<std::uint64_t>(
      top.integer("seed", 1, 0, std::numeric_limits<std::int64_t>::max()));
  s.start_utc = top.text("start_utc", s.start_utc);
  s.duration_s = top.number("duration_s", s.duration_s);
  s.integration_s = top.number("integration_s", s.integration_s);
  s.screen_spacing_m = top.number("screen_spacing_m", s.screen_spacing_m);
  const std::string site_file = top.text("site_file", "");
  if (site_file.empty()) throw InvalidInput(source + ": missing site_file");
  const std::string radiometer_file = top.text("radiometer_file", "");
  if (radiometer_file.empty()) throw InvalidInput(source + ": missing radiometer_file");
  read_array(top, s);
  read_atmosphere_and_true_sky(top, s);
  read_source_and_observing(top, s);
  for_each_table(top, "turbulence",
                 [&](StrictTable& t) { s.turbulence.push_back(read_turbulence(t)); });
  for_each_table(top, "clouds", [&](StrictTable& t) { s.clouds.push_back(read_cloud(t)); });
  for_each_table(top, "faults", [&](StrictTable& t) { s.faults.push_back(read_fault(t)); });
  // Unknown keys are named before the site and radiometer files are read: a misspelt key in
  // this file is the first thing to fix.
  top.reject_unknown_keys();
  s.site = load_site_config(base_directory / site_file);
  s.radiometer = load_radiometer_config(base_directory / radiometer_file);
  try {
    s.validate();
  } catch (const InvalidInput& e) {
    throw InvalidInput(source + ": " + e.what());
  }
  return s;
}

Scenario load_scenario(const std::filesystem::path& path) {
  return parse_scenario(detail::read_text_file(path, "scenario file"), path.string(),
                        path.parent_path());
}

}  // namespace wvr
