// Directions other than azimuth/elevation are converted with casacore's measures (MDirection
// conversion to AZEL with the antenna's ITRF position and the sample's UTC epoch as the frame);
// AZEL is casacore's topocentric azimuth (north through east) and elevation, without refraction.
#include "archive/ms_pointing.hpp"

#include <casacore/casa/Arrays/Vector.h>
#include <casacore/casa/Exceptions/Error.h>
#include <casacore/casa/Quanta/MVDirection.h>
#include <casacore/casa/Quanta/MVPosition.h>
#include <casacore/measures/Measures/MCDirection.h>
#include <casacore/measures/Measures/MDirection.h>
#include <casacore/measures/Measures/MEpoch.h>
#include <casacore/measures/Measures/MPosition.h>
#include <casacore/measures/Measures/MeasConvert.h>
#include <casacore/measures/Measures/MeasFrame.h>
#include <casacore/measures/TableMeasures/ArrayMeasColumn.h>
#include <casacore/tables/Tables/ScalarColumn.h>

#include <algorithm>
#include <cmath>
#include <map>

#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {
namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr double kDegPerRad = 180.0 / kPi;

struct Direction {
  double time_mjd_s = 0.0;
  double longitude_rad = 0.0, latitude_rad = 0.0;
  casacore::MDirection::Types frame = casacore::MDirection::J2000;
};

bool is_azel(casacore::MDirection::Types type) {
  return type == casacore::MDirection::AZEL || type == casacore::MDirection::AZELGEO;
}

Direction first_direction(const casacore::Vector<casacore::MDirection>& d, double time_mjd_s) {
  const casacore::Vector<double> angle = d[0].getAngle("rad").getValue();
  return {time_mjd_s, angle[0], angle[1],
          static_cast<casacore::MDirection::Types>(d[0].getRef().getType())};
}

// Converts directions of any frame to AZEL for one antenna, one converter per input frame.
class AzElConverter {
 public:
  explicit AzElConverter(const std::array<double, 3>& itrf_m)
      : frame_(casacore::MPosition(casacore::MVPosition(itrf_m[0], itrf_m[1], itrf_m[2]),
                                   casacore::MPosition::ITRF),
               casacore::MEpoch(casacore::MVEpoch(0.0), casacore::MEpoch::UTC)) {}

  // (azimuth, elevation) in degrees.
  std::pair<double, double> operator()(const Direction& d, double time_mjd_s) {
    if (is_azel(d.frame)) return {d.longitude_rad * kDegPerRad, d.latitude_rad * kDegPerRad};
    auto it = converters_.find(d.frame);
    if (it == converters_.end()) {
      it = converters_
               .emplace(d.frame, casacore::MDirection::Convert(
                                     casacore::MDirection::Ref(d.frame),
                                     casacore::MDirection::Ref(casacore::MDirection::AZEL, frame_)))
               .first;
    }
    frame_.resetEpoch(casacore::MVEpoch(casacore::Quantity(time_mjd_s, "s")));
    const casacore::MDirection azel =
        it->second(casacore::MVDirection(d.longitude_rad, d.latitude_rad));
    const casacore::Vector<double> angle = azel.getAngle("rad").getValue();
    double az = angle[0] * kDegPerRad;
    if (az < 0.0) az += 360.0;
    return {az, angle[1] * kDegPerRad};
  }

 private:
  casacore::MeasFrame frame_;
  std::map<int, casacore::MDirection::Convert> converters_;
};

// Linear interpolation of stored azimuth/elevation (azimuth unwrapped across 0/360).
std::pair<double, double> interpolate_azel(const std::vector<Direction>& rows, double t) {
  auto hi = std::lower_bound(rows.begin(), rows.end(), t,
                             [](const Direction& d, double x) { return d.time_mjd_s < x; });
  if (hi == rows.begin())
    return {rows.front().longitude_rad * kDegPerRad, rows.front().latitude_rad * kDegPerRad};
  if (hi == rows.end())
    return {rows.back().longitude_rad * kDegPerRad, rows.back().latitude_rad * kDegPerRad};
  const Direction& a = *(hi - 1);
  const Direction& b = *hi;
  const double f = (t - a.time_mjd_s) / (b.time_mjd_s - a.time_mjd_s);
  const double daz = std::remainder(b.longitude_rad - a.longitude_rad, 2.0 * kPi);
  double az = (a.longitude_rad + f * daz) * kDegPerRad;
  az = std::fmod(az + 720.0, 360.0);
  return {az, (a.latitude_rad + f * (b.latitude_rad - a.latitude_rad)) * kDegPerRad};
}

}  // namespace

PointingSeries read_pointing(const std::filesystem::path& ms,
                             const MsMetadata& metadata,
                             const std::vector<double>& grid_mjd_s,
                             const std::vector<int>& field_id,
                             std::vector<std::string>& notes) {
  const std::string label = ms.string();
  const std::size_t na = metadata.antenna_names.size(), nt = grid_mjd_s.size();
  std::vector<std::vector<Direction>> stored(na);
  if (casacore::Table::isReadable((ms / "POINTING").string())) {
    const casacore::Table pointing = open_subtable(ms, "POINTING");
    for (const char* c : {"ANTENNA_ID", "TIME", "DIRECTION"})
      require_column(pointing, label + "/POINTING", c);
    casacore::ScalarColumn<int> antenna(pointing, "ANTENNA_ID");
    casacore::ScalarColumn<double> time(pointing, "TIME");
    casacore::ArrayMeasColumn<casacore::MDirection> direction(pointing, "DIRECTION");
    for (casacore::rownr_t r = 0; r < pointing.nrow(); ++r) {
      const int a = antenna(r);
      if (a < 0 || static_cast<std::size_t>(a) >= na) {
        throw InvalidInput(label + "/POINTING: row " + std::to_string(r) +
                           " has ANTENNA_ID = " + std::to_string(a) + " outside ANTENNA's " +
                           std::to_string(na) + " rows");
      }
      stored[static_cast<std::size_t>(a)].push_back(first_direction(direction(r), time(r)));
    }
  }
  std::vector<Direction> field_direction;
  {
    const casacore::Table field = open_subtable(ms, "FIELD");
    require_column(field, label + "/FIELD", "PHASE_DIR");
    casacore::ArrayMeasColumn<casacore::MDirection> phase_dir(field, "PHASE_DIR");
    for (casacore::rownr_t r = 0; r < field.nrow(); ++r)
      field_direction.push_back(first_direction(phase_dir(r), 0.0));
  }

  PointingSeries out;
  out.azimuth_deg.resize(na * nt);
  out.elevation_deg.resize(na * nt);
  std::size_t from_field = 0;
  for (std::size_t a = 0; a < na; ++a) {
    std::vector<Direction>& rows = stored[a];
    std::stable_sort(rows.begin(), rows.end(), [](const Direction& x, const Direction& y) {
      return x.time_mjd_s < y.time_mjd_s;
    });
    AzElConverter convert(metadata.antenna_itrf_m[a]);
    int field = -1;
    for (std::size_t k = 0; k < nt; ++k) {
      const double t = grid_mjd_s[k];
      if (field_id[a * nt + k] >= 0) field = field_id[a * nt + k];
      std::pair<double, double> azel;
      if (!rows.empty() && is_azel(rows.front().frame)) {
        azel = interpolate_azel(rows, t);
      } else if (!rows.empty()) {
        // Tracking directions in a sky frame: the last row at or before t (the first before).
        auto it = std::upper_bound(rows.begin(), rows.end(), t,
                                   [](double x, const Direction& d) { return x < d.time_mjd_s; });
        azel = convert(it == rows.begin() ? *it : *(it - 1), t);
      } else {
        if (field < 0) {
          // No field yet: the antenna's first field later in the night.
          for (std::size_t j = k; j < nt && field < 0; ++j) field = field_id[a * nt + j];
        }
        if (field < 0 || static_cast<std::size_t>(field) >= field_direction.size()) {
          throw InvalidInput(label + ": antenna " + metadata.antenna_names[a] +
                             " has no POINTING rows and no FIELD_ID to compute its pointing from");
        }
        azel = convert(field_direction[static_cast<std::size_t>(field)], t);
        ++from_field;
      }
      out.azimuth_deg[a * nt + k] = azel.first;
      out.elevation_deg[a * nt + k] = azel.second;
    }
  }
  if (from_field > 0) {
    notes.push_back("pointing of " + std::to_string(from_field) +
                    " samples computed from the FIELD phase centres (no POINTING rows for "
                    "those antennas)");
  }
  return out;
}

}  // namespace wvr::archive
