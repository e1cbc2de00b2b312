// Earth-fixed to geodetic coordinates by fixed-point iteration on the latitude (converges to
// well below a micrometre in a handful of steps for points near the surface).
#include "archive/geodesy.hpp"

#include <cmath>
#include <numbers>

namespace wvr::archive {
namespace {

constexpr double kSemiMajorAxisM = 6378137.0;
constexpr double kFlattening = 1.0 / 298.257223563;
constexpr double kEccentricitySquared = kFlattening * (2.0 - kFlattening);
constexpr double kDegPerRad = 180.0 / std::numbers::pi;

double prime_vertical_radius_m(double sin_lat) {
  return kSemiMajorAxisM / std::sqrt(1.0 - kEccentricitySquared * sin_lat * sin_lat);
}

}  // namespace

Geodetic geodetic_from_itrf(const std::array<double, 3>& xyz_m) {
  const double x = xyz_m[0], y = xyz_m[1], z = xyz_m[2];
  const double p = std::hypot(x, y);
  double lat = std::atan2(z, p * (1.0 - kEccentricitySquared));
  double height = 0.0;
  for (int i = 0; i < 10; ++i) {
    const double n = prime_vertical_radius_m(std::sin(lat));
    height = p / std::cos(lat) - n;
    lat = std::atan2(z, p * (1.0 - kEccentricitySquared * n / (n + height)));
  }
  const double n = prime_vertical_radius_m(std::sin(lat));
  height = p / std::cos(lat) - n;
  return {lat * kDegPerRad, std::atan2(y, x) * kDegPerRad, height};
}

std::array<double, 3> itrf_from_geodetic(const Geodetic& g) {
  const double lat = g.latitude_deg / kDegPerRad, lon = g.longitude_deg / kDegPerRad;
  const double n = prime_vertical_radius_m(std::sin(lat));
  return {(n + g.height_m) * std::cos(lat) * std::cos(lon),
          (n + g.height_m) * std::cos(lat) * std::sin(lon),
          (n * (1.0 - kEccentricitySquared) + g.height_m) * std::sin(lat)};
}

std::array<double, 3> enu_from_itrf(const std::array<double, 3>& xyz_m, const Geodetic& origin) {
  const std::array<double, 3> o = itrf_from_geodetic(origin);
  const double dx = xyz_m[0] - o[0], dy = xyz_m[1] - o[1], dz = xyz_m[2] - o[2];
  const double lat = origin.latitude_deg / kDegPerRad, lon = origin.longitude_deg / kDegPerRad;
  const double sl = std::sin(lat), cl = std::cos(lat), so = std::sin(lon), co = std::cos(lon);
  return {-so * dx + co * dy, -sl * co * dx - sl * so * dy + cl * dz,
          cl * co * dx + cl * so * dy + sl * dz};
}

}  // namespace wvr::archive
