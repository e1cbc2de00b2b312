// Simulated sky dips: the sky model's channel brightness at each elevation of the scan, through
// each unit's offset and gain, with the channels' thermal noise.
#include <cmath>
#include <string>

#include "core/gaussian_random.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"
#include "wvr/sky_dip.hpp"
#include "wvr/sky_model.hpp"

namespace wvr {
namespace {

// A per-channel calibration value: one value for every channel, or one per channel.
std::vector<double> per_channel(const std::vector<double>& values,
                                double default_value,
                                std::size_t channels,
                                const std::string& field) {
  if (values.empty()) return std::vector<double>(channels, default_value);
  for (std::size_t c = 0; c < values.size(); ++c)
    require_finite(field + "[" + std::to_string(c) + "]", values[c]);
  if (values.size() == 1) return std::vector<double>(channels, values[0]);
  if (values.size() != channels)
    throw InvalidInput(field + " has " + std::to_string(values.size()) +
                       " values; expected 1 or one per channel (" + std::to_string(channels) + ")");
  return values;
}

}  // namespace

void SkyDipSimulationOptions::validate() const {
  if (elevation_deg.empty()) throw InvalidInput("elevation_deg is empty");
  const double min_elevation_deg = SkyOptions{}.min_elevation_deg;
  for (std::size_t i = 0; i < elevation_deg.size(); ++i)
    require_in_range("elevation_deg[" + std::to_string(i) + "]", elevation_deg[i],
                     min_elevation_deg, 90.0, "deg");
  require_in_range("sample_interval_s", sample_interval_s, 1e-3, 3600.0, "s");
  require_in_range("dwell_s", dwell_s, sample_interval_s, 86400.0, "s");
}

std::vector<SkyDip> simulate_sky_dips(const AtmosphereProfile& profile,
                                      const RadiometerConfig& radiometer,
                                      const std::vector<SkyDipUnit>& units,
                                      const SkyDipSimulationOptions& options) {
  options.validate();
  radiometer.validate();
  if (units.empty()) throw InvalidInput("units is empty: no radiometer to simulate");
  const SkyModel sky(make_absorption_model(options.absorption_model));
  const std::size_t channels = radiometer.channels.size();
  std::vector<ChannelBrightness> sky_at_elevation;
  for (double el : options.elevation_deg)
    sky_at_elevation.push_back(sky.channels(profile, radiometer, el));
  const int samples_per_elevation =
      static_cast<int>(std::floor(options.dwell_s / options.sample_interval_s + 1e-9));

  detail::GaussianSource noise(options.seed);
  std::vector<SkyDip> dips;
  for (std::size_t u = 0; u < units.size(); ++u) {
    const std::string field = "units[" + std::to_string(u) + "]";
    const std::vector<double> offset_k =
        per_channel(units[u].offset_k, 0.0, channels, field + ".offset_k");
    const std::vector<double> gain = per_channel(units[u].gain, 1.0, channels, field + ".gain");
    SkyDip dip;
    dip.antenna = units[u].antenna.empty() ? "unit" + std::to_string(u) : units[u].antenna;
    double time_s = 0.0;
    for (std::size_t e = 0; e < options.elevation_deg.size(); ++e) {
      for (int s = 0; s < samples_per_elevation; ++s) {
        std::vector<double> row(channels);
        for (std::size_t c = 0; c < channels; ++c) {
          const double thermal_k =
              options.add_noise ? radiometer.channels[c].noise_k * noise.next() : 0.0;
          row[c] = offset_k[c] + gain[c] * sky_at_elevation[e].brightness_k[c] + thermal_k;
        }
        dip.time_s.push_back(time_s);
        dip.elevation_deg.push_back(options.elevation_deg[e]);
        dip.brightness_k.push_back(std::move(row));
        time_s += options.sample_interval_s;
      }
    }
    dips.push_back(std::move(dip));
  }
  return dips;
}

}  // namespace wvr
