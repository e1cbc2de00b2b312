#pragma once
// Apparent position of a source tracked through the night (simulator pointing).

namespace wvr {

struct SourceTrack {
  double declination_deg = -30.0;
  double start_hour_angle_h = -1.0;  // hour angle at time 0 (h, negative = rising)
};

struct HorizonPosition {
  double elevation_deg = 0.0;
  double azimuth_deg = 0.0;  // from north through east, [0, 360)
};

// Position at `time_s` after the start for an observer at latitude_deg: the hour angle
// advances at the sidereal rate (15.0411 deg per hour; one sidereal day is 23.9345 h), and
//   sin(el) = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H),
//   az = atan2(-cos(dec) sin(H), sin(dec) cos(phi) - cos(dec) sin(phi) cos(H))
// (spherical astronomy, e.g. Smart, "Textbook on Spherical Astronomy", 6th ed., ch. II).
// Refraction is not applied (the sky model works with apparent elevation).
HorizonPosition source_position(double latitude_deg, const SourceTrack& track, double time_s);

}  // namespace wvr
