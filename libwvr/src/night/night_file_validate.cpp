// Validation of a Night against the night file schema (libwvr/FORMAT.md). Used before
// every write and after every read, so the writer never produces a file the reader rejects.

#include <cmath>
#include <set>
#include <string>
#include <utility>
#include <vector>

#include "night/night_file_detail.hpp"
#include "wvr/error.hpp"
#include "wvr/night.hpp"

namespace wvr {
namespace {

using detail::format_number;

std::string index_text(std::size_t flat, const std::vector<std::size_t>& dims) {
  if (dims.size() <= 1) return "index " + std::to_string(flat);
  std::vector<std::size_t> index(dims.size());
  for (std::size_t i = dims.size(); i-- > 0;) {
    index[i] = flat % dims[i];
    flat /= dims[i];
  }
  std::string text = "[";
  for (std::size_t i = 0; i < index.size(); ++i) {
    text += (i > 0 ? ", " : "") + std::to_string(index[i]);
  }
  return text + "]";
}

// "[i]" (built by appending: GCC 12 warns falsely, -Wrestrict, on "[" + std::string).
std::string bracketed(std::size_t i) {
  std::string text(1, '[');
  text += std::to_string(i);
  text += ']';
  return text;
}

std::string dims_text(const std::vector<std::size_t>& dims) {
  std::string text = "[";
  for (std::size_t i = 0; i < dims.size(); ++i) {
    text += (i > 0 ? ", " : "") + std::to_string(dims[i]);
  }
  return text + "]";
}

// Member names of groups: letters, digits, '_', '-', '.', not "." or "..", so that they are
// plain HDF5 link names and portable file-system-like identifiers.
bool valid_member_name(const std::string& name) {
  if (name.empty() || name == "." || name == "..") return false;
  for (char ch : name) {
    const bool ok = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
                    (ch >= '0' && ch <= '9') || ch == '_' || ch == '-' || ch == '.';
    if (!ok) return false;
  }
  return true;
}

class Checker {
 public:
  explicit Checker(std::string source) : source_(std::move(source)) {}

  [[noreturn]] void fail(const std::string& path, const std::string& what) const {
    throw InvalidInput(source_ + ": " + path + " " + what);
  }

  void size(const std::string& path,
            std::size_t actual,
            const std::string& axes,
            const std::vector<std::size_t>& dims) const {
    std::size_t expected = 1;
    for (std::size_t n : dims) expected *= n;
    if (actual != expected) {
      fail(path, "has " + std::to_string(actual) + " values, expected " + axes + " = " +
                     dims_text(dims) + " (" + std::to_string(expected) + ")");
    }
  }

  void finite(const std::string& path,
              const std::vector<double>& values,
              const std::vector<std::size_t>& dims) const {
    for (std::size_t i = 0; i < values.size(); ++i) {
      if (!std::isfinite(values[i])) {
        fail(path, "is not finite at " + index_text(i, dims) + " (value " +
                       format_number(values[i]) + ")");
      }
    }
  }

  // Finite and within [lo, hi] (written with `unit`).
  void in_range(const std::string& path,
                const std::vector<double>& values,
                const std::vector<std::size_t>& dims,
                double lo,
                double hi,
                const std::string& unit) const {
    finite(path, values, dims);
    for (std::size_t i = 0; i < values.size(); ++i) {
      if (values[i] < lo || values[i] > hi) {
        fail(path, "= " + format_number(values[i]) + " " + unit + " at " + index_text(i, dims) +
                       " is outside [" + format_number(lo) + ", " + format_number(hi) + "] " +
                       unit);
      }
    }
  }

  void positive(const std::string& path, double value, const std::string& unit) const {
    if (!std::isfinite(value) || value <= 0.0) {
      fail(path, "= " + format_number(value) + " " + unit + " must be finite and positive");
    }
  }

  // Finite times, strictly increasing (or only non-decreasing).
  void times(const std::string& path, const std::vector<double>& time_s, bool strict) const {
    finite(path, time_s, {time_s.size()});
    for (std::size_t i = 1; i < time_s.size(); ++i) {
      const bool bad = strict ? !(time_s[i] > time_s[i - 1]) : time_s[i] < time_s[i - 1];
      if (bad) {
        fail(path, std::string(strict ? "is not strictly increasing" : "is not sorted") +
                       " at index " + std::to_string(i) + " (t = " + format_number(time_s[i]) +
                       " s after " + format_number(time_s[i - 1]) + " s)");
      }
    }
  }

  // Text stored as an HDF5 C string: no embedded NUL; optionally non-empty.
  void text(const std::string& path,
            const std::string& value,
            std::size_t index,
            bool allow_empty) const {
    if (value.find('\0') != std::string::npos) {
      fail(path, "entry " + std::to_string(index) + " contains a NUL character");
    }
    if (!allow_empty && value.empty()) fail(path, "entry " + std::to_string(index) + " is empty");
  }

  void unique_names(const std::string& path, const std::vector<std::string>& names) const {
    std::set<std::string> seen;
    for (std::size_t i = 0; i < names.size(); ++i) {
      text(path, names[i], i, false);
      if (!seen.insert(names[i]).second) {
        fail(path, "entry " + std::to_string(i) + " \"" + names[i] + "\" is a duplicate");
      }
    }
  }

 private:
  std::string source_;
};

// ISO 8601 UTC instant "YYYY-MM-DDThh:mm:ssZ" with a real calendar date.
bool valid_epoch(const std::string& text) {
  if (text.size() != 20) return false;
  const std::string pattern = "dddd-dd-ddTdd:dd:ddZ";
  for (std::size_t i = 0; i < pattern.size(); ++i) {
    const bool digit = text[i] >= '0' && text[i] <= '9';
    if (pattern[i] == 'd' ? !digit : text[i] != pattern[i]) return false;
  }
  const auto number = [&](std::size_t pos, std::size_t len) {
    return std::stoi(text.substr(pos, len));
  };
  const int year = number(0, 4);
  const int month = number(5, 2);
  const int day = number(8, 2);
  if (month < 1 || month > 12 || day < 1) return false;
  const bool leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
  const int days_in_month[] = {31, leap ? 29 : 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  if (day > days_in_month[month - 1]) return false;
  // Second 60 is a leap second.
  return number(11, 2) <= 23 && number(14, 2) <= 59 && number(17, 2) <= 60;
}

void check_array(const Checker& check, const Night& night) {
  const NightArray& array = night.array;
  const std::size_t antennas = array.antenna_names.size();
  if (antennas == 0) check.fail("/array/antenna_names", "is empty; a night needs an antenna");
  check.unique_names("/array/antenna_names", array.antenna_names);
  check.size("/array/position_enu_m", array.position_enu_m.size() * 3, "[antenna, 3]",
             {antennas, 3});
  for (std::size_t a = 0; a < antennas; ++a) {
    for (std::size_t k = 0; k < 3; ++k) {
      if (!std::isfinite(array.position_enu_m[a][k])) {
        check.fail("/array/position_enu_m", "is not finite at [" + std::to_string(a) + ", " +
                                                std::to_string(k) + "] (value " +
                                                format_number(array.position_enu_m[a][k]) + ")");
      }
    }
  }
  check.size("/array/radiometer_id", array.radiometer_ids.size(), "[antenna]", {antennas});
  for (std::size_t a = 0; a < antennas; ++a) {
    check.text("/array/radiometer_id", array.radiometer_ids[a], a, true);
  }
  // Plausibility bounds of a place on the Earth's surface.
  check.in_range("/array attribute reference_latitude_deg", {array.reference_latitude_deg}, {1},
                 -90.0, 90.0, "deg");
  check.in_range("/array attribute reference_longitude_deg", {array.reference_longitude_deg}, {1},
                 -180.0, 360.0, "deg");
  check.in_range("/array attribute reference_height_m", {array.reference_height_m}, {1}, -1000.0,
                 10000.0, "m");
}

// The channel table's field checks name the dataset; RadiometerConfig::validate() then adds
// the physical ones (band edges above 0 GHz IF, sky bands within 1-1000 GHz, no overlap).
void check_channels(const Checker& check, const RadiometerConfig& config) {
  check.text("/radiometer attribute name", config.name, 0, true);
  check.positive("/radiometer attribute lo_freq_ghz", config.lo_freq_ghz, "GHz");
  if (config.quadrature_points_per_sideband < 1) {
    check.fail(
        "/radiometer attribute quadrature_points_per_sideband",
        "= " + std::to_string(config.quadrature_points_per_sideband) + " must be at least 1");
  }
  const auto& channels = config.channels;
  if (channels.empty())
    check.fail("/radiometer/channels/name", "is empty; a radiometer needs a channel");
  std::vector<std::string> names;
  for (const RadiometerChannel& channel : channels) names.push_back(channel.name);
  check.unique_names("/radiometer/channels/name", names);
  for (std::size_t c = 0; c < channels.size(); ++c) {
    const std::string at = bracketed(c);
    check.positive("/radiometer/channels/if_centre_ghz" + at, channels[c].if_centre_ghz, "GHz");
    check.positive("/radiometer/channels/bandwidth_ghz" + at, channels[c].bandwidth_ghz, "GHz");
    check.positive("/radiometer/channels/sideband_ratio" + at, channels[c].sideband_ratio, "");
    if (!std::isfinite(channels[c].noise_k) || channels[c].noise_k < 0.0) {
      check.fail("/radiometer/channels/noise_k" + at,
                 "= " + format_number(channels[c].noise_k) + " K must be finite and >= 0");
    }
  }
  try {
    config.validate();
  } catch (const InvalidInput& error) {
    check.fail("/radiometer/channels", std::string("is not a valid radiometer: ") + error.what());
  }
}

void check_radiometer(const Checker& check, const Night& night) {
  const std::size_t antennas = night.antenna_count();
  const std::size_t times = night.time_count();
  const std::size_t channels = night.channel_count();
  check_channels(check, night.radiometer.config);
  if (times == 0) check.fail("/radiometer/time_s", "is empty; a night needs a sample");
  check.times("/radiometer/time_s", night.radiometer.time_s, true);
  const auto& brightness = night.radiometer.brightness_k;
  const auto& valid = night.radiometer.valid;
  check.size("/radiometer/brightness_k", brightness.size(), "[antenna, time, channel]",
             {antennas, times, channels});
  check.size("/radiometer/valid", valid.size(), "[antenna, time]", {antennas, times});
  for (std::size_t i = 0; i < valid.size(); ++i) {
    if (valid[i] > 1) {
      check.fail("/radiometer/valid", "= " + std::to_string(valid[i]) + " at " +
                                          index_text(i, {antennas, times}) + " is not 0 or 1");
    }
    if (valid[i] == 0) continue;
    for (std::size_t c = 0; c < channels; ++c) {
      const double value = brightness[i * channels + c];
      if (!std::isfinite(value)) {
        check.fail("/radiometer/brightness_k",
                   "is not finite at " + index_text(i * channels + c, {antennas, times, channels}) +
                       " (value " + format_number(value) + ") where /radiometer/valid is 1");
      }
    }
  }
}

void check_pointing(const Checker& check, const Night& night) {
  const std::vector<std::size_t> dims = {night.antenna_count(), night.time_count()};
  const auto& pointing = night.pointing;
  check.size("/pointing/elevation_deg", pointing.elevation_deg.size(), "[antenna, time]", dims);
  check.size("/pointing/azimuth_deg", pointing.azimuth_deg.size(), "[antenna, time]", dims);
  check.in_range("/pointing/elevation_deg", pointing.elevation_deg, dims, -90.0, 90.0, "deg");
  // Wide enough for the cable wrap of common alt-azimuth mounts (common practice).
  check.in_range("/pointing/azimuth_deg", pointing.azimuth_deg, dims, -360.0, 720.0, "deg");
}

void check_scans(const Checker& check, const Night& night) {
  const auto& scans = night.scans;
  for (std::size_t i = 0; i < scans.size(); ++i) {
    const std::string at = bracketed(i);
    if (!std::isfinite(scans[i].start_s) || !std::isfinite(scans[i].stop_s) ||
        !(scans[i].start_s < scans[i].stop_s)) {
      check.fail("/scans/start_s" + at, "= " + format_number(scans[i].start_s) +
                                            " s and /scans/stop_s" + at + " = " +
                                            format_number(scans[i].stop_s) +
                                            " s do not form a finite interval with start < stop");
    }
    if (i > 0 && scans[i].start_s < scans[i - 1].stop_s) {
      check.fail("/scans/start_s" + at, "= " + format_number(scans[i].start_s) +
                                            " s is before the end of the previous scan (" +
                                            format_number(scans[i - 1].stop_s) +
                                            " s); scans must be sorted and not overlap");
    }
    check.text("/scans/source", scans[i].source, i, false);
    check.positive("/scans/obs_freq_ghz" + at, scans[i].obs_freq_ghz, "GHz");
  }
}

void check_weather(const Checker& check, const Night& night) {
  const auto& weather = night.weather;
  const std::vector<std::size_t> dims = {weather.time_s.size()};
  check.times("/weather/time_s", weather.time_s, true);
  check.size("/weather/temperature_k", weather.temperature_k.size(), "[weather]", dims);
  check.size("/weather/pressure_hpa", weather.pressure_hpa.size(), "[weather]", dims);
  check.size("/weather/relative_humidity_pct", weather.relative_humidity_pct.size(), "[weather]",
             dims);
  // Plausibility bounds for a surface station: record surface temperatures are about
  // 184-330 K (from memory), and 100 hPa is far above any site.
  check.in_range("/weather/temperature_k", weather.temperature_k, dims, 150.0, 350.0, "K");
  check.in_range("/weather/pressure_hpa", weather.pressure_hpa, dims, 100.0, 1100.0, "hPa");
  check.in_range("/weather/relative_humidity_pct", weather.relative_humidity_pct, dims, 0.0, 100.0,
                 "%");
}

void check_calibrator_phases(const Checker& check, const Night& night) {
  const auto& phases = night.calibrator_phases;
  const std::size_t rows = phases.time_s.size();
  check.times("/calibrator_phases/time_s", phases.time_s, false);
  check.size("/calibrator_phases/antenna_pair", phases.antenna_pair.size() * 2, "[row, 2]",
             {rows, 2});
  check.size("/calibrator_phases/phase_rad", phases.phase_rad.size(), "[row]", {rows});
  check.size("/calibrator_phases/freq_ghz", phases.freq_ghz.size(), "[row]", {rows});
  const auto antennas = static_cast<std::int64_t>(night.antenna_count());
  for (std::size_t i = 0; i < rows; ++i) {
    const auto [first, second] = phases.antenna_pair[i];
    if (first < 0 || first >= antennas || second < 0 || second >= antennas || first == second) {
      check.fail("/calibrator_phases/antenna_pair",
                 "= [" + std::to_string(first) + ", " + std::to_string(second) + "] at row " +
                     std::to_string(i) + " is not a pair of two different antennas in [0, " +
                     std::to_string(antennas) + ")");
    }
    check.positive("/calibrator_phases/freq_ghz[" + std::to_string(i) + "]", phases.freq_ghz[i],
                   "GHz");
  }
  check.finite("/calibrator_phases/phase_rad", phases.phase_rad, {rows});
}

void check_truth(const Checker& check, const Night& night) {
  if (!night.truth) return;
  const NightTruth& truth = *night.truth;
  const std::vector<std::size_t> dims = {night.antenna_count(), night.time_count()};
  check.size("/truth/wet_path_m", truth.wet_path_m.size(), "[antenna, time]", dims);
  check.size("/truth/dry_path_m", truth.dry_path_m.size(), "[antenna, time]", dims);
  check.size("/truth/pwv_mm", truth.pwv_mm.size(), "[antenna, time]", dims);
  check.finite("/truth/wet_path_m", truth.wet_path_m, dims);
  check.finite("/truth/dry_path_m", truth.dry_path_m, dims);
  check.in_range("/truth/pwv_mm", truth.pwv_mm, dims, 0.0, 1.0e3, "mm");
  if (!truth.calibration_offset_k.empty() || !truth.calibration_gain.empty()) {
    const std::vector<std::size_t> per_channel = {night.antenna_count(), night.channel_count()};
    for (const auto& [path, values] :
         {std::pair{"/truth/calibration_offset_k", &truth.calibration_offset_k},
          std::pair{"/truth/calibration_gain", &truth.calibration_gain},
          std::pair{"/truth/calibration_offset_drift_k_per_hour",
                    &truth.calibration_offset_drift_k_per_hour},
          std::pair{"/truth/calibration_gain_drift_per_hour",
                    &truth.calibration_gain_drift_per_hour}}) {
      check.size(path, values->size(), "[antenna, channel]", per_channel);
      check.finite(path, *values, per_channel);
    }
  }
  const auto antennas = static_cast<std::int64_t>(night.antenna_count());
  for (std::size_t i = 0; i < truth.episodes.size(); ++i) {
    const TruthEpisode& episode = truth.episodes[i];
    const std::string at = bracketed(i);
    if (!std::isfinite(episode.start_s) || !std::isfinite(episode.stop_s) ||
        !(episode.start_s < episode.stop_s)) {
      check.fail("/truth/episodes/start_s" + at,
                 "= " + format_number(episode.start_s) + " s and /truth/episodes/stop_s" + at +
                     " = " + format_number(episode.stop_s) +
                     " s do not form a finite interval with start < stop");
    }
    if (episode.antenna < -1 || episode.antenna >= antennas) {
      check.fail("/truth/episodes/antenna" + at, "= " + std::to_string(episode.antenna) +
                                                     " is neither -1 (all) nor an antenna index");
    }
    check.text("/truth/episodes/label", episode.label, i, false);
  }
}

}  // namespace

namespace detail {

void validate_result_group(const ResultGroup& group, const std::string& source) {
  const Checker check(source);
  const std::string path = "/results/" + group.stage;
  if (!valid_member_name(group.stage)) {
    check.fail(path, "has an invalid stage name (use letters, digits, '_', '-', '.')");
  }
  for (const auto& [name, value] : group.attributes) {
    if (name.empty() || name.find('\0') != std::string::npos) {
      check.fail(path, "has an attribute with an empty or NUL-containing name");
    }
    check.text(path + " attribute " + name, value, 0, true);
  }
  std::set<std::string> seen;
  for (const ResultDataset& dataset : group.datasets) {
    const std::string dataset_path = path + "/" + dataset.name;
    if (!valid_member_name(dataset.name)) {
      check.fail(dataset_path, "has an invalid dataset name (use letters, digits, '_', '-', '.')");
    }
    if (!seen.insert(dataset.name).second) check.fail(dataset_path, "is a duplicate dataset");
    const std::size_t values =
        std::visit([](const auto& vector) { return vector.size(); }, dataset.values);
    check.size(dataset_path, values, "shape", dataset.shape);
    if (dataset.units.empty() || dataset.units.find('\0') != std::string::npos) {
      check.fail(dataset_path, "needs a units string (\"1\" if dimensionless)");
    }
    for (const auto& [name, value] : dataset.attributes) {
      if (name.empty() || name.find('\0') != std::string::npos || name == "units") {
        check.fail(dataset_path,
                   "attribute \"" + name + "\" is not allowed (empty, NUL or \"units\")");
      }
      check.text(dataset_path + " attribute " + name, value, 0, true);
    }
  }
}

}  // namespace detail

namespace {

void check_site(const Checker& check, const Night& night) {
  if (!night.site) return;
  check.text("/site attribute name", night.site->site.name, 0, true);
  check.text("/site attribute provenance", night.site->provenance, 0, true);
  try {
    require_in_range("latitude_deg", night.site->site.latitude_deg, -90.0, 90.0, "deg");
    night.site->site.parameters.validate();
  } catch (const InvalidInput& error) {
    check.fail("/site", error.what());
  }
}

}  // namespace

void validate_night(const Night& night, const std::string& source) {
  const Checker check(source);
  if (!valid_epoch(night.time_epoch_utc)) {
    check.fail("/ attribute time_epoch_utc", "= \"" + night.time_epoch_utc +
                                                 "\" is not an ISO 8601 UTC instant "
                                                 "YYYY-MM-DDThh:mm:ssZ");
  }
  check_array(check, night);
  check_radiometer(check, night);
  check_pointing(check, night);
  check_scans(check, night);
  check_weather(check, night);
  check_calibrator_phases(check, night);
  check_truth(check, night);
  check_site(check, night);
  std::set<std::string> stages;
  for (const ResultGroup& group : night.results) {
    detail::validate_result_group(group, source);
    if (!stages.insert(group.stage).second) {
      check.fail("/results/" + group.stage, "is a duplicate result group");
    }
  }
}

}  // namespace wvr
