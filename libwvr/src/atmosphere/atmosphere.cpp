#include "wvr/atmosphere.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/water_vapour.hpp"

namespace wvr {
namespace {

std::string layer_field(std::size_t index, const char* field) {
  return "layer[" + std::to_string(index) + "]." + field;
}

double gravity_m_per_s2(double height_m) {
  const double ratio = constants::earth_radius_m / (constants::earth_radius_m + height_m);
  return constants::standard_gravity_m_per_s2 * ratio * ratio;
}

}  // namespace

namespace detail {

double logarithmic_mean(double a, double b) {
  if (a <= 0.0 || b <= 0.0) return 0.5 * (a + b);
  const double ratio = b / a;
  if (std::abs(ratio - 1.0) < 1e-6) return 0.5 * (a + b);  // limit, avoids 0/0
  return (b - a) / std::log(ratio);
}

}  // namespace detail

double AtmosphereLayer::vapour_pressure_hpa() const {
  return wvr::vapour_pressure_hpa(vapour_density_kg_m3, temperature_k);
}

GasState AtmosphereLayer::gas_state() const {
  const double e = vapour_pressure_hpa();
  return {pressure_hpa - e, e, temperature_k};
}

AtmosphereProfile::AtmosphereProfile(std::vector<AtmosphereLayer> layers)
    : layers_(std::move(layers)) {
  if (layers_.empty()) throw InvalidInput("atmosphere profile has no layers");
  for (std::size_t i = 0; i < layers_.size(); ++i) {
    const AtmosphereLayer& l = layers_[i];
    require_finite(layer_field(i, "base_m"), l.base_m);
    require_finite(layer_field(i, "top_m"), l.top_m);
    if (!(l.top_m > l.base_m)) {
      throw InvalidInput(describe_value(layer_field(i, "top_m"), l.top_m) +
                         " is not above its base_m = " + std::to_string(l.base_m));
    }
    if (i > 0 && std::abs(l.base_m - layers_[i - 1].top_m) > 1e-6) {
      throw InvalidInput(describe_value(layer_field(i, "base_m"), l.base_m) +
                         " does not continue the layer below (top_m = " +
                         std::to_string(layers_[i - 1].top_m) + ")");
    }
    require_in_range(layer_field(i, "temperature_k"), l.temperature_k, 100.0, 1500.0, "K");
    require_in_range(layer_field(i, "pressure_hpa"), l.pressure_hpa, 1e-9, 1200.0, "hPa");
    require_in_range(layer_field(i, "vapour_density_kg_m3"), l.vapour_density_kg_m3, 0.0, 0.1,
                     "kg/m^3");
    require_in_range(layer_field(i, "liquid_density_kg_m3"), l.liquid_density_kg_m3, 0.0, 0.01,
                     "kg/m^3");
    if (l.vapour_pressure_hpa() >= l.pressure_hpa) {
      throw InvalidInput(
          describe_value(layer_field(i, "vapour_density_kg_m3"), l.vapour_density_kg_m3) +
          " gives a vapour pressure above the total pressure");
    }
  }
}

double AtmosphereProfile::pwv_mm() const {
  double column_kg_m2 = 0.0;
  for (const AtmosphereLayer& l : layers_) column_kg_m2 += l.vapour_density_kg_m3 * l.thickness_m();
  // 1 kg/m^2 of vapour condenses to 1 mm of liquid water.
  return column_kg_m2 * 1000.0 / constants::liquid_water_density_kg_per_m3;
}

double AtmosphereProfile::liquid_water_path_kg_m2() const {
  double column = 0.0;
  for (const AtmosphereLayer& l : layers_) column += l.liquid_density_kg_m3 * l.thickness_m();
  return column;
}

AtmosphereProfile AtmosphereProfile::scaled_to_pwv(double target_pwv_mm) const {
  require_in_range("pwv_mm", target_pwv_mm, 0.0, 200.0, "mm");
  const double current = pwv_mm();
  if (current <= 0.0 && target_pwv_mm > 0.0) {
    throw InvalidInput(describe_value("pwv_mm", target_pwv_mm) +
                       " cannot be reached: the profile holds no water vapour to scale");
  }
  const double factor = current > 0.0 ? target_pwv_mm / current : 0.0;
  std::vector<AtmosphereLayer> scaled = layers_;
  for (AtmosphereLayer& l : scaled) l.vapour_density_kg_m3 *= factor;
  return AtmosphereProfile(std::move(scaled));
}

AtmosphereProfile AtmosphereProfile::with_cloud(double base_above_ground_m,
                                                double thickness_m,
                                                double liquid_water_path_kg_m2) const {
  require_in_range("cloud.base_above_ground_m", base_above_ground_m, 0.0,
                   top_altitude_m() - ground_altitude_m(), "m");
  require_in_range("cloud.thickness_m", thickness_m, 1.0, 20000.0, "m");
  require_in_range("cloud.liquid_water_path_kg_m2", liquid_water_path_kg_m2, 0.0, 10.0, "kg/m^2");
  const double base = ground_altitude_m() + base_above_ground_m;
  const double top = std::min(base + thickness_m, top_altitude_m());
  const double content = liquid_water_path_kg_m2 / (top - base);
  std::vector<AtmosphereLayer> clouded = layers_;
  for (AtmosphereLayer& l : clouded) {
    const double overlap = std::min(l.top_m, top) - std::max(l.base_m, base);
    if (overlap > 0.0) l.liquid_density_kg_m3 += content * overlap / l.thickness_m();
  }
  return AtmosphereProfile(std::move(clouded));
}

void SiteParameters::validate() const {
  require_in_range("altitude_m", altitude_m, -500.0, 6500.0, "m");
  require_in_range("surface_temperature_k", surface_temperature_k, 180.0, 330.0, "K");
  require_in_range("surface_pressure_hpa", surface_pressure_hpa, 300.0, 1100.0, "hPa");
  require_in_range("lapse_rate_k_per_km", lapse_rate_k_per_km, 0.0, 10.0, "K/km");
  require_in_range("tropopause_m", tropopause_m, altitude_m + 1000.0, 25000.0, "m");
  require_in_range("water_scale_height_m", water_scale_height_m, 100.0, 10000.0, "m");
  if (pwv_mm.has_value() == surface_relative_humidity_pct.has_value()) {
    throw InvalidInput(
        "site humidity: set exactly one of pwv_mm and surface_relative_humidity_pct");
  }
  if (pwv_mm) require_in_range("pwv_mm", *pwv_mm, 0.0, 100.0, "mm");
  if (surface_relative_humidity_pct) {
    require_in_range("surface_relative_humidity_pct", *surface_relative_humidity_pct, 0.0, 100.0,
                     "%");
  }
  if (inversion) {
    require_in_range("inversion.base_above_ground_m", inversion->base_above_ground_m, 0.0, 5000.0,
                     "m");
    require_in_range("inversion.depth_m", inversion->depth_m, 0.0, 3000.0, "m");
    require_in_range("inversion.temperature_jump_k", inversion->temperature_jump_k, -30.0, 30.0,
                     "K");
  }
}

void LayerGrid::validate() const {
  if (layer_count < 4 || layer_count > 5000) {
    throw InvalidInput("layer_count = " + std::to_string(layer_count) + " is outside [4, 5000]");
  }
  require_in_range("top_altitude_m", top_altitude_m, 5000.0, 100000.0, "m");
}

std::vector<double> layer_boundaries(double ground_m,
                                     double top_m,
                                     int layer_count,
                                     const std::vector<double>& knots_m) {
  constexpr double kStretch = 4.5;
  const double height = top_m - ground_m;
  std::vector<double> grid;
  grid.reserve(static_cast<std::size_t>(layer_count) + 1 + knots_m.size());
  for (int k = 0; k <= layer_count; ++k) {
    grid.push_back(ground_m +
                   height * std::expm1(kStretch * k / layer_count) / std::expm1(kStretch));
  }
  grid.back() = top_m;
  for (double knot : knots_m) {
    if (!(knot > ground_m && knot < top_m)) continue;
    auto upper = std::lower_bound(grid.begin(), grid.end(), knot);
    auto lower = upper - 1;
    const double spacing = *upper - *lower;
    // Move a nearby free boundary onto the knot rather than creating a sliver layer.
    if (*upper - knot < 0.3 * spacing && upper != grid.end() - 1) {
      *upper = knot;
    } else if (knot - *lower < 0.3 * spacing && lower != grid.begin()) {
      *lower = knot;
    } else {
      grid.insert(upper, knot);
    }
  }
  std::sort(grid.begin(), grid.end());
  grid.erase(std::unique(grid.begin(), grid.end(),
                         [](double a, double b) { return std::abs(a - b) < 1e-3; }),
             grid.end());
  return grid;
}

AtmosphereProfile make_parametric_profile(const SiteParameters& site, const LayerGrid& grid) {
  site.validate();
  grid.validate();
  if (grid.top_altitude_m <= site.tropopause_m) {
    throw InvalidInput(describe_value("top_altitude_m", grid.top_altitude_m) +
                       " must be above tropopause_m = " + std::to_string(site.tropopause_m));
  }
  const double z0 = site.altitude_m;
  const double lapse_k_per_m = site.lapse_rate_k_per_km / 1000.0;
  auto temperature_at = [&](double z) {
    double t = site.surface_temperature_k - lapse_k_per_m * (std::min(z, site.tropopause_m) - z0);
    if (site.inversion) {
      const Inversion& inv = *site.inversion;
      const double start = z0 + inv.base_above_ground_m;
      if (z >= start) {
        const double fraction = inv.depth_m > 0.0 ? std::min((z - start) / inv.depth_m, 1.0) : 1.0;
        t += inv.temperature_jump_k * fraction;
      }
    }
    return t;
  };

  std::vector<double> knots = {site.tropopause_m};
  if (site.inversion) {
    knots.push_back(z0 + site.inversion->base_above_ground_m);
    knots.push_back(z0 + site.inversion->base_above_ground_m + site.inversion->depth_m);
  }
  const std::vector<double> bounds =
      layer_boundaries(z0, grid.top_altitude_m, grid.layer_count, knots);

  // Hydrostatic ln P on a 10 m grid (trapezoid rule), interpolated at layer mid-heights.
  constexpr double kStepM = 10.0;
  const std::size_t steps =
      static_cast<std::size_t>(std::ceil((grid.top_altitude_m - z0) / kStepM));
  std::vector<double> log_p(steps + 1);
  log_p[0] = std::log(site.surface_pressure_hpa);
  auto integrand = [&](double z) {
    return gravity_m_per_s2(z) / (constants::dry_air_gas_constant_j_per_kg_k * temperature_at(z));
  };
  for (std::size_t i = 1; i <= steps; ++i) {
    const double za = z0 + kStepM * static_cast<double>(i - 1);
    const double zb = z0 + kStepM * static_cast<double>(i);
    log_p[i] = log_p[i - 1] - 0.5 * kStepM * (integrand(za) + integrand(zb));
  }
  auto pressure_at = [&](double z) {
    const double x = (z - z0) / kStepM;
    const std::size_t i = std::min(static_cast<std::size_t>(x), steps - 1);
    const double w = x - static_cast<double>(i);
    return std::exp((1.0 - w) * log_p[i] + w * log_p[i + 1]);
  };

  double surface_vapour_kg_m3 = 1.0;  // rescaled below when pwv_mm is given
  if (site.surface_relative_humidity_pct) {
    const double es = saturation_vapour_pressure_hpa(site.surface_temperature_k);
    surface_vapour_kg_m3 = vapour_density_kg_m3(es * *site.surface_relative_humidity_pct / 100.0,
                                                site.surface_temperature_k);
  }
  std::vector<AtmosphereLayer> layers;
  layers.reserve(bounds.size() - 1);
  for (std::size_t i = 0; i + 1 < bounds.size(); ++i) {
    AtmosphereLayer l;
    l.base_m = bounds[i];
    l.top_m = bounds[i + 1];
    const double z = l.mid_m();
    l.temperature_k = temperature_at(z);
    l.pressure_hpa = pressure_at(z);
    l.vapour_density_kg_m3 = detail::logarithmic_mean(
        surface_vapour_kg_m3 * std::exp(-(l.base_m - z0) / site.water_scale_height_m),
        surface_vapour_kg_m3 * std::exp(-(l.top_m - z0) / site.water_scale_height_m));
    layers.push_back(l);
  }
  if (site.pwv_mm) {
    double column = 0.0;
    for (const AtmosphereLayer& l : layers) column += l.vapour_density_kg_m3 * l.thickness_m();
    for (AtmosphereLayer& l : layers) l.vapour_density_kg_m3 *= *site.pwv_mm / column;
  }
  return AtmosphereProfile(std::move(layers));
}

}  // namespace wvr
