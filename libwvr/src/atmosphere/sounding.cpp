#include "wvr/sounding.hpp"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <string>

#include "wvr/error.hpp"
#include "wvr/water_vapour.hpp"

namespace wvr {
namespace {

std::string level_name(std::size_t i, const SoundingLevel& level) {
  std::ostringstream out;
  out << "level " << i + 1 << " (height_m = " << level.height_m << ")";
  return out.str();
}

std::vector<std::string> split_csv(const std::string& line) {
  std::vector<std::string> cells;
  std::stringstream stream(line);
  std::string cell;
  while (std::getline(stream, cell, ',')) {
    const auto first = cell.find_first_not_of(" \t\r");
    const auto last = cell.find_last_not_of(" \t\r");
    cells.push_back(first == std::string::npos ? "" : cell.substr(first, last - first + 1));
  }
  return cells;
}

}  // namespace

void validate_sounding(const std::vector<SoundingLevel>& levels) {
  if (levels.size() < 2) {
    throw InvalidInput("sounding has " + std::to_string(levels.size()) +
                       " levels; at least 2 are needed");
  }
  for (std::size_t i = 0; i < levels.size(); ++i) {
    const SoundingLevel& l = levels[i];
    const std::string name = level_name(i, l);
    require_in_range(name + " height_m", l.height_m, -500.0, 150000.0, "m");
    require_in_range(name + " pressure_hpa", l.pressure_hpa, 1e-6, 1100.0, "hPa");
    // Thermospheric levels of model profiles (above 50 km) may be far hotter than air below.
    require_in_range(name + " temperature_k", l.temperature_k, 150.0,
                     l.height_m < 50000.0 ? 350.0 : 1500.0, "K");
    require_in_range(name + " vapour_density_kg_m3", l.vapour_density_kg_m3, 0.0, 0.1, "kg/m^3");
    const double e = vapour_pressure_hpa(l.vapour_density_kg_m3, l.temperature_k);
    const double es = saturation_vapour_pressure_hpa(l.temperature_k);
    if (e > 1.1 * es) {
      throw InvalidInput(name + ": vapour pressure " + std::to_string(e) +
                         " hPa exceeds saturation over water (" + std::to_string(es) +
                         " hPa) by more than 10 %");
    }
    if (i > 0) {
      if (!(l.height_m > levels[i - 1].height_m)) {
        throw InvalidInput(name + ": height_m is not above the previous level's " +
                           std::to_string(levels[i - 1].height_m) + " m");
      }
      if (!(l.pressure_hpa < levels[i - 1].pressure_hpa)) {
        throw InvalidInput(name + ": pressure_hpa = " + std::to_string(l.pressure_hpa) +
                           " does not decrease from the previous level's " +
                           std::to_string(levels[i - 1].pressure_hpa) + " hPa");
      }
    }
  }
}

AtmosphereProfile profile_from_sounding(const std::vector<SoundingLevel>& levels,
                                        const LayerGrid& grid) {
  validate_sounding(levels);
  if (grid.layer_count < 4) throw InvalidInput("layer_count must be at least 4");
  const double ground = levels.front().height_m;
  const double top = levels.back().height_m;
  const std::vector<double> reference = layer_boundaries(ground, top, grid.layer_count, {});
  auto max_thickness_at = [&](double z) {
    auto it = std::upper_bound(reference.begin(), reference.end(), z);
    if (it == reference.end()) --it;
    if (it == reference.begin()) ++it;
    return *it - *(it - 1);
  };

  std::vector<AtmosphereLayer> layers;
  for (std::size_t i = 0; i + 1 < levels.size(); ++i) {
    const SoundingLevel& a = levels[i];
    const SoundingLevel& b = levels[i + 1];
    const double span = b.height_m - a.height_m;
    const int parts = std::max(
        1, static_cast<int>(
               std::ceil(span / max_thickness_at(0.5 * (a.height_m + b.height_m)) - 1e-9)));
    for (int k = 0; k < parts; ++k) {
      AtmosphereLayer l;
      l.base_m = a.height_m + span * k / parts;
      l.top_m = (k + 1 == parts) ? b.height_m : a.height_m + span * (k + 1) / parts;
      const double w = (l.mid_m() - a.height_m) / span;
      l.temperature_k = (1.0 - w) * a.temperature_k + w * b.temperature_k;
      l.pressure_hpa =
          std::exp((1.0 - w) * std::log(a.pressure_hpa) + w * std::log(b.pressure_hpa));
      // Vapour density is log-linear between levels; the layer gets its exact mean.
      auto vapour_at = [&](double z) {
        const double v = (z - a.height_m) / span;
        if (a.vapour_density_kg_m3 > 0.0 && b.vapour_density_kg_m3 > 0.0) {
          return std::exp((1.0 - v) * std::log(a.vapour_density_kg_m3) +
                          v * std::log(b.vapour_density_kg_m3));
        }
        return (1.0 - v) * a.vapour_density_kg_m3 + v * b.vapour_density_kg_m3;
      };
      l.vapour_density_kg_m3 = detail::logarithmic_mean(vapour_at(l.base_m), vapour_at(l.top_m));
      layers.push_back(l);
    }
  }
  return AtmosphereProfile(std::move(layers));
}

std::vector<SoundingLevel> read_sounding_csv(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw InvalidInput("sounding file " + path.string() + " cannot be opened");
  std::string line;
  std::size_t line_number = 0;
  std::map<std::string, std::size_t> columns;
  std::vector<SoundingLevel> levels;
  const std::string where = "sounding file " + path.string();
  auto column = [&](const std::string& name) -> std::ptrdiff_t {
    auto it = columns.find(name);
    return it == columns.end() ? -1 : static_cast<std::ptrdiff_t>(it->second);
  };
  std::ptrdiff_t height = -1, pressure = -1, temperature = -1, density = -1, dewpoint = -1,
                 humidity = -1;
  while (std::getline(in, line)) {
    ++line_number;
    const auto first = line.find_first_not_of(" \t\r");
    if (first == std::string::npos || line[first] == '#') continue;
    const std::vector<std::string> cells = split_csv(line);
    if (columns.empty()) {
      for (std::size_t i = 0; i < cells.size(); ++i) columns[cells[i]] = i;
      height = column("height_m");
      pressure = column("pressure_hpa");
      temperature = column("temperature_c");
      density = column("vapour_density_g_m3");
      dewpoint = column("dewpoint_c");
      humidity = column("relative_humidity_pct");
      for (const auto& [name, index] :
           {std::pair{"height_m", height}, std::pair{"pressure_hpa", pressure},
            std::pair{"temperature_c", temperature}}) {
        if (index < 0) throw InvalidInput(where + ": header has no column '" + name + "'");
      }
      if (density < 0 && dewpoint < 0 && humidity < 0) {
        throw InvalidInput(where +
                           ": header needs one humidity column: vapour_density_g_m3, "
                           "dewpoint_c or relative_humidity_pct");
      }
      continue;
    }
    auto value = [&](std::ptrdiff_t index, const char* name) {
      const std::string at = where + " line " + std::to_string(line_number);
      if (static_cast<std::size_t>(index) >= cells.size()) {
        throw InvalidInput(at + ": missing value for " + name);
      }
      const std::string& text = cells[static_cast<std::size_t>(index)];
      try {
        std::size_t used = 0;
        const double v = std::stod(text, &used);
        if (used != text.size()) throw std::invalid_argument(text);
        return v;
      } catch (const std::exception&) {
        throw InvalidInput(at + ": " + name + " = '" + text + "' is not a number");
      }
    };
    SoundingLevel level;
    level.height_m = value(height, "height_m");
    level.pressure_hpa = value(pressure, "pressure_hpa");
    level.temperature_k = value(temperature, "temperature_c") + 273.15;
    if (density >= 0) {
      level.vapour_density_kg_m3 = value(density, "vapour_density_g_m3") * 1e-3;
    } else if (dewpoint >= 0) {
      const double e = vapour_pressure_from_dewpoint_hpa(value(dewpoint, "dewpoint_c") + 273.15);
      level.vapour_density_kg_m3 = vapour_density_kg_m3(e, level.temperature_k);
    } else {
      const double e = saturation_vapour_pressure_hpa(level.temperature_k) *
                       value(humidity, "relative_humidity_pct") / 100.0;
      level.vapour_density_kg_m3 = vapour_density_kg_m3(e, level.temperature_k);
    }
    levels.push_back(level);
  }
  if (columns.empty()) throw InvalidInput(where + " has no header line");
  try {
    validate_sounding(levels);
  } catch (const InvalidInput& error) {
    throw InvalidInput(where + ": " + error.what());
  }
  return levels;
}

}  // namespace wvr
