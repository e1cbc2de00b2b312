// Units come from each column's QuantumUnits keyword: temperature in K or C (degrees Celsius),
// pressure in hPa, mbar or Pa, humidity in % (an MS writes these; the MS v2 definition lists
// K, hPa and % as the defaults, from memory). Stations reporting at the same TIME are averaged.
#include "archive/ms_weather.hpp"

#include <casacore/tables/Tables/ScalarColumn.h>
#include <casacore/tables/Tables/TableColumn.h>

#include <cmath>
#include <map>

#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {
namespace {

double temperature_scale_offset(const std::string& unit, const std::string& label, double& scale) {
  scale = 1.0;
  if (unit.empty() || unit == "K") return 0.0;
  if (unit == "C" || unit == "Cel" || unit == "deg_C") return 273.15;
  throw InvalidInput(label + "/WEATHER: TEMPERATURE unit '" + unit + "' is not K or C");
}

double pressure_scale(const std::string& unit, const std::string& label) {
  if (unit.empty() || unit == "hPa" || unit == "mbar") return 1.0;
  if (unit == "Pa") return 0.01;
  if (unit == "kPa") return 10.0;
  throw InvalidInput(label + "/WEATHER: PRESSURE unit '" + unit + "' is not hPa, mbar or Pa");
}

}  // namespace

WeatherSeries read_weather(const std::filesystem::path& ms,
                           double epoch_mjd_s,
                           std::vector<std::string>& notes) {
  const std::string label = ms.string();
  WeatherSeries out;
  if (!casacore::Table::isReadable((ms / "WEATHER").string())) {
    notes.push_back("no WEATHER table: the night has no weather series");
    return out;
  }
  const casacore::Table weather = open_subtable(ms, "WEATHER");
  if (weather.nrow() == 0) {
    notes.push_back("WEATHER has no rows: the night has no weather series");
    return out;
  }
  for (const char* c : {"TIME", "TEMPERATURE", "PRESSURE", "REL_HUMIDITY"})
    require_column(weather, label + "/WEATHER", c);
  double t_scale = 1.0;
  const double t_offset =
      temperature_scale_offset(column_unit(weather, "TEMPERATURE"), label, t_scale);
  const double p_scale = pressure_scale(column_unit(weather, "PRESSURE"), label);
  casacore::ScalarColumn<double> time(weather, "TIME");
  // TableColumn::asdouble reads float or double columns alike.
  const casacore::TableColumn temperature(weather, "TEMPERATURE"), pressure(weather, "PRESSURE"),
      humidity(weather, "REL_HUMIDITY");
  const bool has_flag_row = weather.tableDesc().isColumn("FLAG_ROW");
  casacore::ScalarColumn<bool> flag_row;
  if (has_flag_row) flag_row.attach(weather, "FLAG_ROW");
  struct Sum {
    double t = 0, p = 0, h = 0;
    int n = 0;
  };
  std::map<double, Sum> by_time;
  std::size_t skipped = 0;
  for (casacore::rownr_t r = 0; r < weather.nrow(); ++r) {
    const double tk = temperature.asdouble(r) * t_scale + t_offset;
    const double p = pressure.asdouble(r) * p_scale;
    const double h = humidity.asdouble(r);
    if ((has_flag_row && flag_row(r)) || !std::isfinite(tk) || !std::isfinite(p) ||
        !std::isfinite(h)) {
      ++skipped;
      continue;
    }
    Sum& s = by_time[time(r)];
    s.t += tk;
    s.p += p;
    s.h += h;
    ++s.n;
  }
  for (const auto& [t, s] : by_time) {
    out.time_s.push_back(t - epoch_mjd_s);
    out.temperature_k.push_back(s.t / s.n);
    out.pressure_hpa.push_back(s.p / s.n);
    out.relative_humidity_pct.push_back(s.h / s.n);
  }
  if (skipped > 0)
    notes.push_back("WEATHER: " + std::to_string(skipped) + " flagged or incomplete rows skipped");
  return out;
}

}  // namespace wvr::archive
