#include "wvr/source_track.hpp"

#include <cmath>
#include <numbers>

namespace wvr {

HorizonPosition source_position(double latitude_deg, const SourceTrack& track, double time_s) {
  constexpr double kDeg = std::numbers::pi / 180.0;
  constexpr double kSiderealDegPerSecond = 360.0 / (23.9344696 * 3600.0);
  const double phi = latitude_deg * kDeg;
  const double dec = track.declination_deg * kDeg;
  const double h = (track.start_hour_angle_h * 15.0 + kSiderealDegPerSecond * time_s) * kDeg;
  // Unit vector to the source in local east/north/up; atan2 keeps full precision at the zenith.
  const double east = -std::cos(dec) * std::sin(h);
  const double north = std::sin(dec) * std::cos(phi) - std::cos(dec) * std::sin(phi) * std::cos(h);
  const double up = std::sin(phi) * std::sin(dec) + std::cos(phi) * std::cos(dec) * std::cos(h);
  HorizonPosition p;
  p.elevation_deg = std::atan2(up, std::hypot(east, north)) / kDeg;
  double az = std::atan2(east, north) / kDeg;
  if (az < 0.0) az += 360.0;
  p.azimuth_deg = az;
  return p;
}

}  // namespace wvr
