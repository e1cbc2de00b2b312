#include "wvr/night_site.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

#include "wvr/error.hpp"
#include "wvr/standard_atmosphere.hpp"

namespace wvr {
namespace {

// Median of the finite values; NaN when there are none.
double finite_median(const std::vector<double>& values) {
  std::vector<double> v;
  for (double x : values)
    if (std::isfinite(x)) v.push_back(x);
  if (v.empty()) return std::nan("");
  const auto middle = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), middle, v.end());
  return *middle;
}

}  // namespace

const char* to_string(SiteSource source) {
  switch (source) {
    case SiteSource::kGiven:
      return "given";
    case SiteSource::kNightRecord:
      return "night record";
    case SiteSource::kNightDefaults:
      return "night defaults";
  }
  return "unknown";
}

SiteConfig default_site_from_night(const Night& night) {
  SiteConfig site;
  site.name = "defaults from the night's weather and array height";
  site.latitude_deg = night.array.reference_latitude_deg;
  SiteParameters& p = site.parameters;
  // The reference height is above the ellipsoid; the geoid's undulation (tens of metres) is
  // small against the vapour scale height, so it stands in for the altitude above sea level.
  p.altitude_m = night.array.reference_height_m;
  p.lapse_rate_k_per_km = 6.5;      // US Standard Atmosphere 1976, troposphere
  p.tropopause_m = 11000.0;         // US Standard Atmosphere 1976
  p.water_scale_height_m = 2000.0;  // ITU-R P.835-6 reference atmosphere
  // A site above the standard tropopause keeps a tropopause above it.
  p.tropopause_m = std::max(p.tropopause_m, p.altitude_m + 1000.0);
  const StandardAtmosphereLevel standard = us_standard_atmosphere_1976(std::max(p.altitude_m, 0.0));
  const double t = finite_median(night.weather.temperature_k);
  const double pressure = finite_median(night.weather.pressure_hpa);
  const double rh = finite_median(night.weather.relative_humidity_pct);
  if (!night.weather.time_s.empty() && !std::isfinite(t) && !std::isfinite(pressure)) {
    throw InvalidInput(
        "/weather holds no finite temperature_k or pressure_hpa; give a site (--site) to "
        "process this night");
  }
  p.surface_temperature_k = std::isfinite(t) ? t : standard.temperature_k;
  p.surface_pressure_hpa = std::isfinite(pressure) ? pressure : standard.pressure_hpa;
  if (std::isfinite(rh)) p.surface_relative_humidity_pct = rh;
  try {
    p.validate();
  } catch (const InvalidInput& e) {
    throw InvalidInput(std::string("site defaults from the night: ") + e.what());
  }
  return site;
}

ResolvedSite resolve_night_site(const Night& night,
                                const std::optional<SiteConfig>& given,
                                const std::string& given_description) {
  ResolvedSite out;
  if (given) {
    out.site = *given;
    out.source = SiteSource::kGiven;
    out.description = given_description + " (overrides the night's)";
  } else if (night.site) {
    out.site = night.site->site;
    out.source = SiteSource::kNightRecord;
    out.description = "the night's own site record: " + night.site->provenance;
  } else {
    out.site = default_site_from_night(night);
    out.source = SiteSource::kNightDefaults;
    out.description =
        "defaults from the night's weather and array height (the night has no site record): "
        "lapse rate 6.5 K/km, tropopause 11 km, vapour scale height 2 km";
  }
  return out;
}

}  // namespace wvr
