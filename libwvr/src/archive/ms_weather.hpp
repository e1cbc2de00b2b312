#pragma once
// Surface weather from the WEATHER subtable, averaged over stations at each time.

#include <filesystem>
#include <string>
#include <vector>

namespace wvr::archive {

// Times are MJD seconds minus epoch_mjd_s. Rows flagged (FLAG_ROW) or with non-finite values
// are skipped; a missing or empty table gives an empty series and a note.
struct WeatherSeries {
  std::vector<double> time_s;
  std::vector<double> temperature_k;
  std::vector<double> pressure_hpa;
  std::vector<double> relative_humidity_pct;
};

WeatherSeries read_weather(const std::filesystem::path& ms,
                           double epoch_mjd_s,
                           std::vector<std::string>& notes);

}  // namespace wvr::archive
