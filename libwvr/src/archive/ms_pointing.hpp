#pragma once
// Azimuth and elevation of every antenna at the radiometer times: from POINTING where it holds
// rows for the antenna, otherwise from the FIELD phase centre of each radiometer sample.

#include <filesystem>
#include <string>
#include <vector>

#include "archive/ms_metadata.hpp"

namespace wvr::archive {

// grid_mjd_s: radiometer times (MJD seconds, UTC); field_id: [antenna, time] FIELD row of each
// radiometer sample (-1 when the antenna has none there; the nearest earlier field is used).
// Fills pointing [antenna, time] in degrees. Throws InvalidInput when a sample has neither a
// POINTING row nor a field to compute it from.
struct PointingSeries {
  std::vector<double> azimuth_deg;    // [antenna, time]
  std::vector<double> elevation_deg;  // [antenna, time]
};

PointingSeries read_pointing(const std::filesystem::path& ms,
                             const MsMetadata& metadata,
                             const std::vector<double>& grid_mjd_s,
                             const std::vector<int>& field_id,
                             std::vector<std::string>& notes);

}  // namespace wvr::archive
