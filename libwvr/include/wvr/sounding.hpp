#pragma once
// Atmosphere profiles from a radiosonde (or model) sounding.

#include <filesystem>
#include <vector>

#include "wvr/atmosphere.hpp"

namespace wvr {

struct SoundingLevel {
  double height_m = 0.0;  // above mean sea level
  double pressure_hpa = 0.0;
  double temperature_k = 0.0;
  double vapour_density_kg_m3 = 0.0;
};

// Checks a sounding: at least two levels, strictly increasing height, strictly decreasing
// pressure, temperature 150-350 K (up to 1500 K above 50 km), pressure 0-1100 hPa, vapour pressure
// below saturation over water by no more than 10 % (supersaturation beyond that is a data error),
// all finite. Throws InvalidInput naming the level ("level 7 (height_m = 1829)").
void validate_sounding(const std::vector<SoundingLevel>& levels);

// Layers between the lowest and the top level (the antenna sits at the lowest level; nothing
// is added above the top). Each interval between sounding levels is split so that no layer is
// thicker than the geometric grid of `grid.layer_count` layers over the same height range;
// within an interval temperature is linear in height, ln(pressure) is linear in height and
// vapour density is exponential (log-linear) in height. grid.top_altitude_m is ignored.
AtmosphereProfile profile_from_sounding(const std::vector<SoundingLevel>& levels,
                                        const LayerGrid& grid = {});

// Reads a CSV sounding. Columns (header names, any order, extra columns ignored):
// height_m, pressure_hpa, temperature_c, and humidity as one of vapour_density_g_m3,
// dewpoint_c or relative_humidity_pct (first present in that order wins; dew point and
// relative humidity go through the P.453 saturation pressure over water). Lines starting
// with '#' and blank lines are skipped. Levels are validated; errors name the file and line.
std::vector<SoundingLevel> read_sounding_csv(const std::filesystem::path& path);

}  // namespace wvr
