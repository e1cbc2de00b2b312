#pragma once
// Earth-fixed (ITRF) coordinates to geodetic and local east/north/up on the WGS84 ellipsoid.

#include <array>

namespace wvr::archive {

struct Geodetic {
  double latitude_deg = 0.0;
  double longitude_deg = 0.0;
  double height_m = 0.0;  // above the ellipsoid
};

// WGS84 (NIMA TR8350.2, 3rd edition, table 3.1: a = 6378137 m, 1/f = 298.257223563).
Geodetic geodetic_from_itrf(const std::array<double, 3>& xyz_m);
std::array<double, 3> itrf_from_geodetic(const Geodetic& g);

// East/north/up offset of `xyz_m` from `origin` in the origin's local tangent frame.
std::array<double, 3> enu_from_itrf(const std::array<double, 3>& xyz_m, const Geodetic& origin);

}  // namespace wvr::archive
