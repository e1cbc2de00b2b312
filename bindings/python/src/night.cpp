// Observing nights: the in-memory night with read-only numpy views of its series, nights built
// from numpy arrays, night files (read, write, add result groups) and the night summary.
//
// Every Night object that Python sees has passed wvr::validate_night (read_night,
// Night.from_arrays, simulate_night and with_result_group all validate), so the views'
// shapes always match the vectors behind them; Python cannot change a Night afterwards.
#include "wvr/night.hpp"

#include <pybind11/stl.h>
#include <pybind11/stl/filesystem.h>

#include <array>
#include <cmath>
#include <cstdint>
#include <limits>
#include <set>
#include <sstream>
#include <string>
#include <string_view>
#include <utility>
#include <variant>
#include <vector>

#include "arrays.hpp"
#include "common.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"
#include "wvr/night_summary_fields.hpp"

namespace wvr::python {
namespace {

static_assert(sizeof(std::array<double, 3>) == 3 * sizeof(double),
              "position_enu_m is viewed as a contiguous [antenna, 3] array");
static_assert(sizeof(std::array<std::int32_t, 2>) == 2 * sizeof(std::int32_t),
              "antenna_pair is viewed as a contiguous [row, 2] array");

constexpr std::int64_t kInt32Min = std::numeric_limits<std::int32_t>::min();
constexpr std::int64_t kInt32Max = std::numeric_limits<std::int32_t>::max();

// Field names of nights built in Python start like validate_night's messages.
std::string field(const std::string& dataset_path) { return "night: " + dataset_path; }

py::ssize_t extent(std::size_t n) { return static_cast<py::ssize_t>(n); }

// "[i]", built by appending (GCC 12 warns falsely, -Wrestrict, on "[" + std::string).
std::string bracketed(std::size_t i) {
  std::string text(1, '[');
  text += std::to_string(i);
  text += ']';
  return text;
}

// --- dict input -----------------------------------------------------------------------------

// `object` as a dict with every key of `required`, optionally keys of `optional`, and no other.
py::dict dict_with_keys(const py::handle& object,
                        const std::string& name,
                        const std::vector<const char*>& required,
                        const std::vector<const char*>& optional = {}) {
  if (!py::isinstance<py::dict>(object)) throw InvalidInput(name + ": expected a dict");
  const auto d = py::reinterpret_borrow<py::dict>(object);
  std::set<std::string> known;
  std::string expected;
  for (const auto& list : {required, optional}) {
    for (const char* key : list) {
      known.insert(key);
      if (!expected.empty()) expected += ", ";
      expected += key;
    }
  }
  for (auto item : d) {
    const std::string key = py::str(item.first);
    if (known.count(key) == 0) {
      throw InvalidInput(name + ": unknown key '" + key + "' (expected " + expected + ")");
    }
  }
  for (const char* key : required) {
    if (!d.contains(key)) throw InvalidInput(name + " is missing '" + key + "'");
  }
  return d;
}

std::map<std::string, std::string> text_map(const py::handle& object, const std::string& name) {
  std::map<std::string, std::string> out;
  if (object.is_none()) return out;
  if (!py::isinstance<py::dict>(object)) throw InvalidInput(name + ": expected a dict of str");
  for (auto item : py::reinterpret_borrow<py::dict>(object)) {
    const std::string key = text_of(item.first, name + " key");
    out[key] = text_of(item.second, name + "['" + key + "']");
  }
  return out;
}

py::dict text_dict(const std::map<std::string, std::string>& values) {
  py::dict out;
  for (const auto& [key, value] : values) out[py::str(key)] = value;
  return out;
}

// --- result groups --------------------------------------------------------------------------

template <typename T>
std::vector<T> values_as(const py::array& array) {
  using Typed = py::array_t<T, py::array::c_style | py::array::forcecast>;
  const Typed typed = Typed::ensure(array);
  if (!typed) throw py::error_already_set();
  return std::vector<T>(typed.data(), typed.data() + typed.size());
}

// A dataset from (array, units) or (array, units, attributes). The numpy type picks the
// stored type: float64 and wider floats -> float64, float32/float16 -> float32, bool and
// uint8 -> uint8, other integers -> int32 or int64 by width (uint64 only when it fits int64).
ResultDataset dataset_from_python(const std::string& stage,
                                  const std::string& name,
                                  const py::handle& spec) {
  const std::string path = "/results/" + stage + "/" + name;
  if (!py::isinstance<py::tuple>(spec) && !py::isinstance<py::list>(spec)) {
    throw InvalidInput(path + ": expected (array, units) or (array, units, attributes)");
  }
  const auto items = py::reinterpret_borrow<py::sequence>(spec);
  if (items.size() != 2 && items.size() != 3) {
    throw InvalidInput(path + ": expected (array, units) or (array, units, attributes), got " +
                       std::to_string(items.size()) + " items");
  }
  ResultDataset dataset;
  dataset.name = name;
  dataset.units = text_of(items[1], path + " units");
  if (items.size() == 3) dataset.attributes = text_map(items[2], path + " attributes");
  const py::array array = numeric_array(items[0], path);
  for (py::ssize_t i = 0; i < array.ndim(); ++i) {
    dataset.shape.push_back(static_cast<std::size_t>(array.shape(i)));
  }
  const char kind = array.dtype().kind();
  const auto size = array.itemsize();
  if (kind == 'f') {
    if (size <= 4) {
      dataset.values = values_as<float>(array);
    } else {
      dataset.values = values_as<double>(array);
    }
  } else if (kind == 'b' || (kind == 'u' && size == 1)) {
    dataset.values = values_as<std::uint8_t>(array);
  } else if ((kind == 'i' && size <= 4) || (kind == 'u' && size <= 2)) {
    dataset.values = values_as<std::int32_t>(array);
  } else {
    const std::vector<std::int64_t> values = integers_of_shape(
        array, path, std::vector<py::ssize_t>(array.ndim(), -1), "any shape",
        std::numeric_limits<std::int64_t>::min(), std::numeric_limits<std::int64_t>::max());
    dataset.values = values;
  }
  return dataset;
}

ResultGroup make_result_group(const std::string& stage,
                              const py::handle& datasets,
                              const py::handle& attributes) {
  ResultGroup group;
  group.stage = stage;
  if (!py::isinstance<py::dict>(datasets)) {
    throw InvalidInput("/results/" + stage + ": datasets must be a dict name -> (array, units)");
  }
  for (auto item : py::reinterpret_borrow<py::dict>(datasets)) {
    const std::string name = text_of(item.first, "/results/" + stage + " dataset name");
    group.datasets.push_back(dataset_from_python(stage, name, item.second));
  }
  group.attributes = text_map(attributes, "/results/" + stage + " attributes");
  return group;
}

py::array dataset_view(const ResultDataset& dataset, py::handle owner) {
  const std::vector<py::ssize_t> shape(dataset.shape.begin(), dataset.shape.end());
  return std::visit([&](const auto& values) { return read_only_view(values.data(), shape, owner); },
                    dataset.values);
}

const ResultDataset& dataset_named(const ResultGroup& group, const std::string& name) {
  const ResultDataset* dataset = group.find(name);
  if (dataset == nullptr) {
    throw MissingKey("result group '" + group.stage + "' has no dataset '" + name + "'");
  }
  return *dataset;
}

py::list dataset_names(const ResultGroup& group) {
  py::list names;
  for (const ResultDataset& dataset : group.datasets) names.append(dataset.name);
  return names;
}

// The results of a night as a dict stage -> ResultGroup viewing into the night.
py::dict results_of(const py::object& self) {
  const Night& night = self.cast<const Night&>();
  py::dict out;
  for (const ResultGroup& group : night.results) {
    out[py::str(group.stage)] = py::cast(&group, py::return_value_policy::reference_internal, self);
  }
  return out;
}

std::vector<ResultGroup> groups_from_python(const py::handle& results) {
  std::vector<ResultGroup> groups;
  if (results.is_none()) return groups;
  if (py::isinstance<py::dict>(results)) {
    for (auto item : py::reinterpret_borrow<py::dict>(results)) {
      const std::string stage = text_of(item.first, "night: /results key");
      if (!py::isinstance<ResultGroup>(item.second)) {
        throw InvalidInput("night: /results/" + stage + ": expected a wvr.ResultGroup");
      }
      groups.push_back(item.second.cast<ResultGroup>());
      if (groups.back().stage != stage) {
        throw InvalidInput("night: /results key '" + stage + "' holds the result group of stage '" +
                           groups.back().stage + "'");
      }
    }
    return groups;
  }
  if (py::isinstance<py::str>(results) || !py::isinstance<py::iterable>(results)) {
    throw InvalidInput("night: /results: expected a dict stage -> ResultGroup or a list of them");
  }
  for (const py::handle item : py::reinterpret_borrow<py::iterable>(results)) {
    if (!py::isinstance<ResultGroup>(item)) {
      throw InvalidInput("night: /results[" + std::to_string(groups.size()) +
                         "]: expected a wvr.ResultGroup");
    }
    groups.push_back(item.cast<ResultGroup>());
  }
  return groups;
}

// --- nights from numpy ----------------------------------------------------------------------

std::vector<Scan> scans_from_python(const py::handle& scans) {
  std::vector<Scan> out;
  if (scans.is_none()) return out;
  if (py::isinstance<py::str>(scans) || py::isinstance<py::dict>(scans) ||
      !py::isinstance<py::iterable>(scans)) {
    throw InvalidInput(field("/scans") + ": expected a list of dicts");
  }
  for (const py::handle item : py::reinterpret_borrow<py::iterable>(scans)) {
    const std::string at = bracketed(out.size());
    const py::dict d = dict_with_keys(item, field("/scans" + at),
                                      {"start_s", "stop_s", "intent", "source", "obs_freq_ghz"});
    Scan scan;
    scan.start_s = number_of(d["start_s"], field("/scans/start_s" + at));
    scan.stop_s = number_of(d["stop_s"], field("/scans/stop_s" + at));
    const std::string intent = text_of(d["intent"], field("/scans/intent" + at));
    if (intent != "calibrator" && intent != "target") {
      throw InvalidInput(field("/scans/intent" + at) + " = '" + intent +
                         "' is not one of calibrator, target");
    }
    scan.intent = intent == "calibrator" ? ScanIntent::kCalibrator : ScanIntent::kTarget;
    scan.source = text_of(d["source"], field("/scans/source" + at));
    scan.obs_freq_ghz = number_of(d["obs_freq_ghz"], field("/scans/obs_freq_ghz" + at));
    out.push_back(scan);
  }
  return out;
}

NightWeather weather_from_python(const py::handle& weather) {
  NightWeather out;
  if (weather.is_none()) return out;
  const py::dict d =
      dict_with_keys(weather, field("/weather"),
                     {"time_s", "temperature_k", "pressure_hpa", "relative_humidity_pct"});
  out.time_s = doubles_of_shape(d["time_s"], field("/weather/time_s"), {-1}, "[weather]");
  const std::vector<py::ssize_t> shape = {extent(out.time_s.size())};
  out.temperature_k =
      doubles_of_shape(d["temperature_k"], field("/weather/temperature_k"), shape, "[weather]");
  out.pressure_hpa =
      doubles_of_shape(d["pressure_hpa"], field("/weather/pressure_hpa"), shape, "[weather]");
  out.relative_humidity_pct = doubles_of_shape(
      d["relative_humidity_pct"], field("/weather/relative_humidity_pct"), shape, "[weather]");
  return out;
}

CalibratorPhases phases_from_python(const py::handle& phases) {
  CalibratorPhases out;
  if (phases.is_none()) return out;
  const py::dict d = dict_with_keys(phases, field("/calibrator_phases"),
                                    {"time_s", "antenna_pair", "phase_rad", "freq_ghz"});
  out.time_s = doubles_of_shape(d["time_s"], field("/calibrator_phases/time_s"), {-1}, "[row]");
  const py::ssize_t rows = extent(out.time_s.size());
  const std::vector<std::int64_t> pairs =
      integers_of_shape(d["antenna_pair"], field("/calibrator_phases/antenna_pair"), {rows, 2},
                        "[row, 2]", kInt32Min, kInt32Max);
  for (std::size_t k = 0; k < pairs.size(); k += 2) {
    out.antenna_pair.push_back(
        {static_cast<std::int32_t>(pairs[k]), static_cast<std::int32_t>(pairs[k + 1])});
  }
  out.phase_rad =
      doubles_of_shape(d["phase_rad"], field("/calibrator_phases/phase_rad"), {rows}, "[row]");
  out.freq_ghz =
      doubles_of_shape(d["freq_ghz"], field("/calibrator_phases/freq_ghz"), {rows}, "[row]");
  return out;
}

std::optional<NightTruth> truth_from_python(const py::handle& truth,
                                            const std::vector<py::ssize_t>& antenna_time,
                                            const std::vector<py::ssize_t>& antenna_channel) {
  if (truth.is_none()) return std::nullopt;
  const py::dict d =
      dict_with_keys(truth, field("/truth"), {"wet_path_m", "dry_path_m", "pwv_mm"},
                     {"episodes", "true_sky", "calibration_offset_k", "calibration_gain",
                      "calibration_offset_drift_k_per_hour", "calibration_gain_drift_per_hour"});
  NightTruth out;
  if (d.contains("true_sky") && !d["true_sky"].is_none()) {
    if (!py::isinstance<py::dict>(d["true_sky"]))
      throw InvalidInput(field("/truth/true_sky") + ": expected a dict of name -> text");
    for (const auto& [name, value] : d["true_sky"].cast<py::dict>()) {
      out.sky_differences.emplace_back(text_of(name, field("/truth/true_sky")),
                                       text_of(value, field("/truth/true_sky")));
    }
  }
  if (d.contains("calibration_offset_k")) {
    for (const auto& [key, target] :
         {std::pair{"calibration_offset_k", &out.calibration_offset_k},
          std::pair{"calibration_gain", &out.calibration_gain},
          std::pair{"calibration_offset_drift_k_per_hour",
                    &out.calibration_offset_drift_k_per_hour},
          std::pair{"calibration_gain_drift_per_hour", &out.calibration_gain_drift_per_hour}}) {
      if (!d.contains(key))
        throw InvalidInput(field("/truth") + ": " + key + " missing beside calibration_offset_k");
      *target = doubles_of_shape(d[key], field(std::string("/truth/") + key), antenna_channel,
                                 "[antenna, channel]");
    }
  }
  out.wet_path_m = doubles_of_shape(d["wet_path_m"], field("/truth/wet_path_m"), antenna_time,
                                    "[antenna, time]");
  out.dry_path_m = doubles_of_shape(d["dry_path_m"], field("/truth/dry_path_m"), antenna_time,
                                    "[antenna, time]");
  out.pwv_mm =
      doubles_of_shape(d["pwv_mm"], field("/truth/pwv_mm"), antenna_time, "[antenna, time]");
  if (!d.contains("episodes") || d["episodes"].is_none()) return out;
  const py::handle episodes = d["episodes"];
  if (py::isinstance<py::str>(episodes) || py::isinstance<py::dict>(episodes) ||
      !py::isinstance<py::iterable>(episodes)) {
    throw InvalidInput(field("/truth/episodes") + ": expected a list of dicts");
  }
  for (const py::handle item : py::reinterpret_borrow<py::iterable>(episodes)) {
    const std::string at = bracketed(out.episodes.size());
    const py::dict e = dict_with_keys(item, field("/truth/episodes" + at),
                                      {"start_s", "stop_s", "antenna", "label"});
    TruthEpisode episode;
    episode.start_s = number_of(e["start_s"], field("/truth/episodes/start_s" + at));
    episode.stop_s = number_of(e["stop_s"], field("/truth/episodes/stop_s" + at));
    episode.antenna = static_cast<std::int32_t>(
        integer_of(e["antenna"], field("/truth/episodes/antenna" + at), kInt32Min, kInt32Max));
    episode.label = text_of(e["label"], field("/truth/episodes/label" + at));
    out.episodes.push_back(episode);
  }
  return out;
}

Night night_from_arrays(const std::string& time_epoch_utc,
                        const py::object& antenna_names,
                        const py::object& position_enu_m,
                        const RadiometerConfig& radiometer,
                        const py::object& time_s,
                        const py::object& brightness_k,
                        const py::object& elevation_deg,
                        const py::object& azimuth_deg,
                        const py::object& valid,
                        const py::object& radiometer_ids,
                        double reference_latitude_deg,
                        double reference_longitude_deg,
                        double reference_height_m,
                        const py::object& scans,
                        const py::object& weather,
                        const py::object& calibrator_phases,
                        const py::object& truth,
                        const py::object& results) {
  Night night;
  night.time_epoch_utc = time_epoch_utc;
  night.array.antenna_names = texts_of(antenna_names, field("/array/antenna_names"));
  const py::ssize_t a = extent(night.array.antenna_names.size());
  night.array.radiometer_ids = radiometer_ids.is_none()
                                   ? std::vector<std::string>(night.array.antenna_names.size())
                                   : texts_of(radiometer_ids, field("/array/radiometer_id"));
  const std::vector<double> positions =
      doubles_of_shape(position_enu_m, field("/array/position_enu_m"), {a, 3}, "[antenna, 3]");
  for (std::size_t k = 0; k < positions.size(); k += 3) {
    night.array.position_enu_m.push_back({positions[k], positions[k + 1], positions[k + 2]});
  }
  night.array.reference_latitude_deg = reference_latitude_deg;
  night.array.reference_longitude_deg = reference_longitude_deg;
  night.array.reference_height_m = reference_height_m;

  night.radiometer.config = radiometer;
  night.radiometer.time_s = doubles_of_shape(time_s, field("/radiometer/time_s"), {-1}, "[time]");
  const py::ssize_t t = extent(night.radiometer.time_s.size());
  const py::ssize_t c = extent(radiometer.channels.size());
  night.radiometer.brightness_k = doubles_of_shape(brightness_k, field("/radiometer/brightness_k"),
                                                   {a, t, c}, "[antenna, time, channel]");
  if (valid.is_none()) {
    // Usable wherever every channel holds a number.
    for (py::ssize_t i = 0; i < a * t; ++i) {
      bool finite = true;
      for (py::ssize_t k = 0; k < c; ++k) {
        finite = finite && std::isfinite(night.radiometer.brightness_k[i * c + k]);
      }
      night.radiometer.valid.push_back(finite ? 1 : 0);
    }
  } else {
    for (const std::int64_t v :
         integers_of_shape(valid, field("/radiometer/valid"), {a, t}, "[antenna, time]", 0, 1)) {
      night.radiometer.valid.push_back(static_cast<std::uint8_t>(v));
    }
  }
  night.pointing.elevation_deg =
      doubles_of_shape(elevation_deg, field("/pointing/elevation_deg"), {a, t}, "[antenna, time]");
  night.pointing.azimuth_deg =
      doubles_of_shape(azimuth_deg, field("/pointing/azimuth_deg"), {a, t}, "[antenna, time]");
  night.scans = scans_from_python(scans);
  night.weather = weather_from_python(weather);
  night.calibrator_phases = phases_from_python(calibrator_phases);
  night.truth =
      truth_from_python(truth, {a, t}, {a, static_cast<py::ssize_t>(radiometer.channels.size())});
  night.results = groups_from_python(results);
  validate_night(night, "night");
  return night;
}

// --- nights to Python -----------------------------------------------------------------------

std::vector<py::ssize_t> antenna_time(const Night& n) {
  return {extent(n.antenna_count()), extent(n.time_count())};
}

py::list scans_to_python(const Night& night) {
  py::list out;
  for (const Scan& scan : night.scans) {
    py::dict d;
    d["start_s"] = scan.start_s;
    d["stop_s"] = scan.stop_s;
    d["intent"] = to_string(scan.intent);
    d["source"] = scan.source;
    d["obs_freq_ghz"] = scan.obs_freq_ghz;
    out.append(d);
  }
  return out;
}

py::dict weather_to_python(const py::object& self) {
  const NightWeather& w = self.cast<const Night&>().weather;
  const std::vector<py::ssize_t> shape = {extent(w.time_s.size())};
  py::dict d;
  d["time_s"] = read_only_view(w.time_s, shape, self);
  d["temperature_k"] = read_only_view(w.temperature_k, shape, self);
  d["pressure_hpa"] = read_only_view(w.pressure_hpa, shape, self);
  d["relative_humidity_pct"] = read_only_view(w.relative_humidity_pct, shape, self);
  return d;
}

py::dict phases_to_python(const py::object& self) {
  const CalibratorPhases& p = self.cast<const Night&>().calibrator_phases;
  const py::ssize_t rows = extent(p.time_s.size());
  py::dict d;
  d["time_s"] = read_only_view(p.time_s, {rows}, self);
  d["antenna_pair"] =
      read_only_view(reinterpret_cast<const std::int32_t*>(p.antenna_pair.data()), {rows, 2}, self);
  d["phase_rad"] = read_only_view(p.phase_rad, {rows}, self);
  d["freq_ghz"] = read_only_view(p.freq_ghz, {rows}, self);
  return d;
}

py::object truth_to_python(const py::object& self) {
  const Night& night = self.cast<const Night&>();
  if (!night.truth) return py::none();
  const NightTruth& truth = *night.truth;
  const std::vector<py::ssize_t> shape = antenna_time(night);
  py::dict d;
  d["wet_path_m"] = read_only_view(truth.wet_path_m, shape, self);
  d["dry_path_m"] = read_only_view(truth.dry_path_m, shape, self);
  d["pwv_mm"] = read_only_view(truth.pwv_mm, shape, self);
  py::list episodes;
  for (const TruthEpisode& episode : truth.episodes) {
    py::dict e;
    e["start_s"] = episode.start_s;
    e["stop_s"] = episode.stop_s;
    e["antenna"] = episode.antenna;
    e["label"] = episode.label;
    episodes.append(e);
  }
  d["episodes"] = episodes;
  py::dict sky;
  for (const auto& [name, value] : truth.sky_differences) sky[py::str(name)] = value;
  d["true_sky"] = sky;
  if (!truth.calibration_offset_k.empty()) {
    const std::vector<py::ssize_t> per_channel = {static_cast<py::ssize_t>(night.antenna_count()),
                                                  static_cast<py::ssize_t>(night.channel_count())};
    d["calibration_offset_k"] = read_only_view(truth.calibration_offset_k, per_channel, self);
    d["calibration_gain"] = read_only_view(truth.calibration_gain, per_channel, self);
    d["calibration_offset_drift_k_per_hour"] =
        read_only_view(truth.calibration_offset_drift_k_per_hour, per_channel, self);
    d["calibration_gain_drift_per_hour"] =
        read_only_view(truth.calibration_gain_drift_per_hour, per_channel, self);
  }
  return d;
}

// Night.from_arrays keyword arguments that rebuild the night.
py::dict night_to_dict(const py::object& self) {
  py::dict d;
  for (const char* key : {"time_epoch_utc", "antenna_names", "position_enu_m", "radiometer",
                          "time_s", "brightness_k", "elevation_deg", "azimuth_deg", "valid",
                          "radiometer_ids", "reference_latitude_deg", "reference_longitude_deg",
                          "reference_height_m", "scans", "weather", "calibrator_phases", "truth"}) {
    d[key] = self.attr(key);
  }
  py::dict results;
  for (auto item : results_of(self)) results[item.first] = item.second;
  d["results"] = results;
  return d;
}

std::string describe_night(const Night& night) {
  std::ostringstream out;
  out << "Night(time_epoch_utc='" << night.time_epoch_utc << "', " << night.antenna_count()
      << " antennas x " << night.time_count() << " samples x " << night.channel_count()
      << " channels, truth=" << (night.truth ? "True" : "False") << ", results=[";
  for (std::size_t i = 0; i < night.results.size(); ++i) {
    out << (i > 0 ? ", " : "") << "'" << night.results[i].stage << "'";
  }
  out << "])";
  return out.str();
}

// --- summaries ------------------------------------------------------------------------------

// Summary values as Python objects: arrays as read-only numpy copies, gaps as dicts.
py::object summary_value(const std::vector<double>& values) { return read_only_array(values); }
py::object summary_value(const std::vector<NightGap>& gaps) {
  py::list out;
  for (const NightGap& gap : gaps) {
    py::dict g;
    g["start_s"] = gap.start_s;
    g["stop_s"] = gap.stop_s;
    out.append(g);
  }
  return out;
}
template <typename T>
py::object summary_value(const T& value) {
  return py::cast(value);
}

// Summary values from Python objects; errors name the key `at`.
void read_summary_value(const py::handle& v, const std::string& at, std::string& out) {
  out = text_of(v, at);
}
void read_summary_value(const py::handle& v, const std::string& at, std::size_t& out) {
  out = static_cast<std::size_t>(integer_of(v, at, 0, std::numeric_limits<std::int64_t>::max()));
}
void read_summary_value(const py::handle& v, const std::string& at, double& out) {
  out = number_of(v, at);
}
void read_summary_value(const py::handle& v, const std::string& at, bool& out) {
  if (!py::isinstance<py::bool_>(v)) throw InvalidInput(at + ": expected a bool");
  out = v.cast<bool>();
}
void read_summary_value(const py::handle& v, const std::string& at, std::vector<std::string>& out) {
  out = texts_of(v, at);
}
void read_summary_value(const py::handle& v, const std::string& at, std::vector<double>& out) {
  out = doubles_of_shape(v, at, {-1}, "[n]");
}
void read_summary_value(const py::handle& v, const std::string& at, std::vector<NightGap>& out) {
  if (!py::isinstance<py::list>(v)) throw InvalidInput(at + ": expected a list");
  for (const py::handle gap : v) {
    const std::string item = at + "[" + std::to_string(out.size()) + "]";
    const py::dict g = dict_with_keys(gap, item, {"start_s", "stop_s"});
    out.push_back({number_of(g["start_s"], item + "['start_s']"),
                   number_of(g["stop_s"], item + "['stop_s']")});
  }
}

// Every field of the summary's table (wvr/night_summary_fields.hpp), both ways.
py::dict summary_to_dict(const NightSummary& s) {
  py::dict d;
  for (const NightSummaryField& field : night_summary_fields())
    std::visit([&](auto member) { d[field.name] = summary_value(s.*member); }, field.member);
  return d;
}

NightSummary summary_from_dict(const py::handle& object) {
  std::vector<const char*> keys;
  for (const NightSummaryField& field : night_summary_fields()) keys.push_back(field.name);
  const py::dict d = dict_with_keys(object, "summary", keys);
  NightSummary s;
  for (const NightSummaryField& field : night_summary_fields()) {
    std::visit(
        [&](auto member) {
          read_summary_value(d[field.name], std::string("summary['") + field.name + "']",
                             s.*member);
        },
        field.member);
  }
  return s;
}

// The docstring of summarize_night: every field with its units and meaning.
std::string summary_doc() {
  std::ostringstream doc;
  doc << "Numbers describing a night, a dict of";
  const char* separator = ": ";
  for (const NightSummaryField& field : night_summary_fields()) {
    doc << separator << field.name << " (";
    if (std::string_view(field.units) != "1") doc << field.units << ", ";
    doc << field.meaning << ")";
    separator = "; ";
  }
  doc << ".";
  return doc.str();
}

NightWriteOptions write_options(bool overwrite, bool replace, int compression_level, int threads) {
  if (compression_level < 0 || compression_level > 9) {
    throw InvalidInput("compression_level = " + std::to_string(compression_level) +
                       " is outside [0, 9]");
  }
  if (threads < 0) {
    throw InvalidInput("threads = " + std::to_string(threads) + " is negative (0: all cores)");
  }
  NightWriteOptions options;
  options.overwrite_output = overwrite;
  options.replace_existing_results = replace;
  options.compression_level = compression_level;
  options.threads = threads;
  return options;
}

void add_group(const std::filesystem::path& input,
               const std::filesystem::path& output,
               const ResultGroup& group,
               bool overwrite,
               bool replace,
               int compression_level,
               int threads) {
  const NightWriteOptions options = write_options(overwrite, replace, compression_level, threads);
  py::gil_scoped_release release;
  add_result_group(input, output, group, options);
}

}  // namespace

void export_night(py::module_& m) {
  py::class_<ResultGroup>(m, "ResultGroup", R"doc(
Output of one processing stage (/results/<stage> of a night file): a read-only mapping from
dataset name to numpy array, with the units of every dataset in .units, free-form string
attributes of the group in .attributes and of each dataset in .dataset_attributes.
)doc")
      .def(py::init(&make_result_group), py::arg("stage"), py::arg("datasets"),
           py::arg("attributes") = py::none(), R"doc(
Builds a result group from datasets, a dict name -> (array, units) or
(array, units, attributes): array is any numeric array-like of any shape (a number is a
scalar dataset); units a non-empty str ("1" for dimensionless values, codes and flags);
attributes an optional dict of str. float64 (and wider) arrays are stored as float64,
float32/float16 as float32, bool and uint8 as uint8, other integers as int32 or int64 by
width. attributes: dict of str for the group. Stage and dataset names use letters, digits,
'_', '-' and '.'; names and units are checked when the group enters a night
(Night.with_result_group, Night.from_arrays, add_result_group).
)doc")
      .def_readonly("stage", &ResultGroup::stage)
      .def_property_readonly(
          "attributes", [](const ResultGroup& g) { return text_dict(g.attributes); },
          "String attributes of the group (a copy).")
      .def_property_readonly(
          "units",
          [](const ResultGroup& g) {
            py::dict out;
            for (const ResultDataset& d : g.datasets) out[py::str(d.name)] = d.units;
            return out;
          },
          "Units of each dataset: dict name -> str (\"1\" for dimensionless).")
      .def_property_readonly(
          "dataset_attributes",
          [](const ResultGroup& g) {
            py::dict out;
            for (const ResultDataset& d : g.datasets)
              out[py::str(d.name)] = text_dict(d.attributes);
            return out;
          },
          "String attributes of each dataset other than units: dict name -> dict.")
      .def(
          "__getitem__",
          [](const py::object& self, const std::string& name) {
            return dataset_view(dataset_named(self.cast<const ResultGroup&>(), name), self);
          },
          py::arg("name"), "The dataset called name as a read-only array.")
      .def(
          "get",
          [](const py::object& self, const std::string& name, const py::object& fallback) {
            const ResultDataset* d = self.cast<const ResultGroup&>().find(name);
            return d == nullptr ? fallback : py::object(dataset_view(*d, self));
          },
          py::arg("name"), py::arg("default") = py::none())
      .def("__contains__",
           [](const ResultGroup& g, const py::object& name) {
             return py::isinstance<py::str>(name) && g.find(name.cast<std::string>()) != nullptr;
           })
      .def("__len__", [](const ResultGroup& g) { return g.datasets.size(); })
      .def("__iter__", [](const ResultGroup& g) { return py::iter(dataset_names(g)); })
      .def("keys", &dataset_names, "Dataset names in stored order.")
      .def("values",
           [](const py::object& self) {
             py::list out;
             for (const ResultDataset& d : self.cast<const ResultGroup&>().datasets) {
               out.append(dataset_view(d, self));
             }
             return out;
           })
      .def("items",
           [](const py::object& self) {
             py::list out;
             for (const ResultDataset& d : self.cast<const ResultGroup&>().datasets) {
               out.append(py::make_tuple(d.name, dataset_view(d, self)));
             }
             return out;
           })
      .def(
          "to_dict",
          [](const py::object& self) {
            py::dict out;
            for (const ResultDataset& d : self.cast<const ResultGroup&>().datasets) {
              out[py::str(d.name)] =
                  py::make_tuple(dataset_view(d, self), d.units, text_dict(d.attributes));
            }
            return out;
          },
          "The datasets as the constructor takes them: dict name -> (array, units, attributes).")
      .def("__repr__", [](const ResultGroup& g) {
        std::ostringstream out;
        out << "ResultGroup(stage='" << g.stage << "', datasets=[";
        for (std::size_t i = 0; i < g.datasets.size(); ++i) {
          out << (i > 0 ? ", " : "") << "'" << g.datasets[i].name << "'";
        }
        out << "])";
        return out.str();
      });

  py::class_<Night>(m, "Night", R"doc(
One observing night of radiometer data for an interferometer array, as stored in a night file
(libwvr/FORMAT.md). Read one with wvr.read_night, simulate one with wvr.simulate_night or build
one from numpy arrays with Night.from_arrays. Immutable: the array properties are read-only
views into the night (no copy); Night.with_result_group returns a new night.
Shapes use A antennas, T radiometer samples, C channels.
)doc")
      .def_static("from_arrays", &night_from_arrays, py::kw_only(), py::arg("time_epoch_utc"),
                  py::arg("antenna_names"), py::arg("position_enu_m"), py::arg("radiometer"),
                  py::arg("time_s"), py::arg("brightness_k"), py::arg("elevation_deg"),
                  py::arg("azimuth_deg"), py::arg("valid") = py::none(),
                  py::arg("radiometer_ids") = py::none(), py::arg("reference_latitude_deg") = 0.0,
                  py::arg("reference_longitude_deg") = 0.0, py::arg("reference_height_m") = 0.0,
                  py::arg("scans") = py::none(), py::arg("weather") = py::none(),
                  py::arg("calibrator_phases") = py::none(), py::arg("truth") = py::none(),
                  py::arg("results") = py::none(), R"doc(
Builds and validates a night from numpy arrays (copied). Required: time_epoch_utc
("YYYY-MM-DDThh:mm:ssZ", the instant every time counts from), antenna_names [A] (str),
position_enu_m [A, 3] (m east, north, up of the array reference point), radiometer
(wvr.Radiometer), time_s [T] (s, strictly increasing), brightness_k [A, T, C] (K),
elevation_deg and azimuth_deg [A, T] (deg). Optional: valid [A, T] (bool or 0/1; default: 1
where every channel is finite), radiometer_ids [A] (str, default empty),
reference_latitude_deg / reference_longitude_deg (deg) / reference_height_m (m), scans (list
of dicts start_s, stop_s, intent "calibrator"/"target", source, obs_freq_ghz), weather (dict
of [W] arrays time_s, temperature_k, pressure_hpa, relative_humidity_pct), calibrator_phases
(dict of time_s [P], antenna_pair [P, 2] int, phase_rad [P], freq_ghz [P]), truth (dict of
[A, T] arrays wet_path_m, dry_path_m, pwv_mm and an optional list of episode dicts start_s,
stop_s, antenna, label) and results (dict stage -> ResultGroup, or a list of ResultGroup).
Night.to_dict() gives these arguments back. Raises WvrValueError naming the dataset path,
e.g. "night: /radiometer/time_s is not strictly increasing at index 3 (...)" or
"night: /radiometer/brightness_k has shape (6, 4, 600), expected ...".
)doc")
      .def("to_dict", &night_to_dict,
           "The keyword arguments of Night.from_arrays that rebuild this night (views).")
      .def(
          "with_result_group",
          [](const Night& night, const ResultGroup& group, bool replace) {
            Night out = night;
            ResultGroup* existing = nullptr;
            for (ResultGroup& g : out.results) {
              if (g.stage == group.stage) existing = &g;
            }
            if (existing != nullptr && !replace) {
              throw InvalidInput("night: /results/" + group.stage +
                                 " already exists (pass replace=True to replace it)");
            }
            if (existing != nullptr) {
              *existing = group;
            } else {
              out.results.push_back(group);
            }
            py::gil_scoped_release release;
            validate_night(out, "night");
            return out;
          },
          py::arg("group"), py::kw_only(), py::arg("replace") = false, R"doc(
A copy of the night with group added to its results (or replacing the group of the same stage
when replace is true). Raises WvrValueError for a bad group or an existing stage.
)doc")
      .def_readonly("time_epoch_utc", &Night::time_epoch_utc,
                    "UTC instant every time_s counts from, YYYY-MM-DDThh:mm:ssZ.")
      .def_property_readonly("antenna_count", &Night::antenna_count)
      .def_property_readonly("time_count", &Night::time_count, "Radiometer samples per antenna.")
      .def_property_readonly("channel_count", &Night::channel_count)
      .def_property_readonly(
          "antenna_names", [](const Night& n) { return n.array.antenna_names; },
          "Antenna names [A] (list of str).")
      .def_property_readonly(
          "radiometer_ids", [](const Night& n) { return n.array.radiometer_ids; },
          "Serial of the radiometer unit on each antenna [A] (list of str, may be empty).")
      .def_property_readonly(
          "position_enu_m",
          [](const py::object& self) {
            const Night& n = self.cast<const Night&>();
            return read_only_view(reinterpret_cast<const double*>(n.array.position_enu_m.data()),
                                  {extent(n.antenna_count()), 3}, self);
          },
          "East, north, up offsets of the antennas from the array reference point [A, 3] (m).")
      .def_property_readonly(
          "reference_latitude_deg", [](const Night& n) { return n.array.reference_latitude_deg; },
          "Geodetic latitude of the array reference point (deg).")
      .def_property_readonly(
          "reference_longitude_deg", [](const Night& n) { return n.array.reference_longitude_deg; },
          "Geodetic longitude of the array reference point (deg).")
      .def_property_readonly(
          "reference_height_m", [](const Night& n) { return n.array.reference_height_m; },
          "Height of the array reference point above the reference ellipsoid (m).")
      .def_property_readonly(
          "radiometer", [](const Night& n) { return n.radiometer.config; },
          "Channel table of the radiometers (wvr.Radiometer, a copy).")
      .def_property_readonly(
          "channel_names",
          [](const Night& n) {
            std::vector<std::string> names;
            for (const RadiometerChannel& c : n.radiometer.config.channels) names.push_back(c.name);
            return names;
          },
          "Channel names [C].")
      .def_property_readonly(
          "time_s",
          [](const py::object& self) {
            const Night& n = self.cast<const Night&>();
            return read_only_view(n.radiometer.time_s, {extent(n.time_count())}, self);
          },
          "Radiometer sample times [T] (s after time_epoch_utc).")
      .def_property_readonly(
          "brightness_k",
          [](const py::object& self) {
            const Night& n = self.cast<const Night&>();
            return read_only_view(
                n.radiometer.brightness_k,
                {extent(n.antenna_count()), extent(n.time_count()), extent(n.channel_count())},
                self);
          },
          "Channel brightness temperature [A, T, C] (K); may be NaN where valid is 0.")
      .def_property_readonly(
          "valid",
          [](const py::object& self) {
            const Night& n = self.cast<const Night&>();
            return read_only_view(n.radiometer.valid, antenna_time(n), self);
          },
          "Sample validity [A, T] (uint8: 1 usable, 0 not).")
      .def_property_readonly(
          "elevation_deg",
          [](const py::object& self) {
            const Night& n = self.cast<const Night&>();
            return read_only_view(n.pointing.elevation_deg, antenna_time(n), self);
          },
          "Elevation of each antenna at the sample times [A, T] (deg).")
      .def_property_readonly(
          "azimuth_deg",
          [](const py::object& self) {
            const Night& n = self.cast<const Night&>();
            return read_only_view(n.pointing.azimuth_deg, antenna_time(n), self);
          },
          "Azimuth of each antenna at the sample times [A, T] (deg).")
      .def_property_readonly("scans", &scans_to_python, R"doc(
Scans as a list of dicts: start_s, stop_s (s), intent ("calibrator" or "target"), source,
obs_freq_ghz (GHz, the array's sky frequency).
)doc")
      .def_property_readonly("weather", &weather_to_python, R"doc(
Surface weather series: dict of [W] arrays time_s (s), temperature_k (K), pressure_hpa (hPa),
relative_humidity_pct (%).
)doc")
      .def_property_readonly("calibrator_phases", &phases_to_python, R"doc(
Baseline phases on calibrators: dict of time_s [P] (s), antenna_pair [P, 2] (int32),
phase_rad [P] (rad, phase of antenna_pair[:, 1] minus antenna_pair[:, 0]), freq_ghz [P] (GHz).
)doc")
      .def_property_readonly("truth", &truth_to_python, R"doc(
None for observed nights; for simulated ones a dict of [A, T] arrays wet_path_m (m),
dry_path_m (m), pwv_mm (mm), episodes, a list of dicts start_s, stop_s (s), antenna (index
or -1 for the whole array), label, true_sky (dict name -> text: how the sky that made the
night differs from its site model) and, when the radiometers had calibration errors, [A, C]
arrays calibration_offset_k (K), calibration_gain, calibration_offset_drift_k_per_hour (K/h)
and calibration_gain_drift_per_hour (1/h).
)doc")
      .def_property_readonly("results", &results_of, R"doc(
Result groups: dict stage -> wvr.ResultGroup (name -> read-only array, with .units and
.attributes), in the order the stages were added.
)doc")
      .def("__repr__", &describe_night);

  m.def(
      "read_night",
      [](const std::filesystem::path& path, int threads) {
        if (threads < 0) {
          throw InvalidInput("threads = " + std::to_string(threads) +
                             " is negative (0: all cores)");
        }
        py::gil_scoped_release release;
        return read_night(path, NightReadOptions{.threads = threads});
      },
      py::arg("path"), py::kw_only(), py::arg("threads") = 0, R"doc(
Reads and validates a night file (str or path-like), result groups included. Raises
WvrValueError naming the file and the dataset path on any problem. threads: threads
inflating and checking the datasets' chunks (0 = all cores); the night read does not depend
on it.
)doc");
  m.def(
      "write_night",
      [](const Night& night, const std::filesystem::path& path, bool overwrite,
         int compression_level, int threads) {
        const NightWriteOptions options =
            write_options(overwrite, false, compression_level, threads);
        py::gil_scoped_release release;
        write_night(night, path, options);
      },
      py::arg("night"), py::arg("path"), py::kw_only(), py::arg("overwrite") = false,
      py::arg("compression_level") = NightWriteOptions{}.compression_level, py::arg("threads") = 0,
      R"doc(
Writes night to a new night file at path, under a temporary name renamed into place.
overwrite: replace an existing file; compression_level: gzip level 1-9 of the large datasets,
0 = uncompressed (3-4x faster to write, files about 2x larger); threads: threads compressing
them (0 = all cores; the file's bytes do not depend on it).
)doc");
  m.def("add_result_group", &add_group, py::arg("input_path"), py::arg("output_path"),
        py::arg("group"), py::kw_only(), py::arg("overwrite") = false, py::arg("replace") = false,
        py::arg("compression_level") = NightWriteOptions{}.compression_level,
        py::arg("threads") = 0);
  m.def(
      "add_result_group",
      [](const std::filesystem::path& input, const std::filesystem::path& output,
         const std::string& stage, const py::object& datasets, const py::object& attributes,
         bool overwrite, bool replace, int compression_level, int threads) {
        add_group(input, output, make_result_group(stage, datasets, attributes), overwrite, replace,
                  compression_level, threads);
      },
      py::arg("input_path"), py::arg("output_path"), py::arg("stage"), py::arg("datasets"),
      py::arg("attributes") = py::none(), py::kw_only(), py::arg("overwrite") = false,
      py::arg("replace") = false,
      py::arg("compression_level") = NightWriteOptions{}.compression_level, py::arg("threads") = 0,
      R"doc(
Writes a copy of the night file input_path plus /results/<stage> to output_path (a different
file; the input is only read). The group is a wvr.ResultGroup, or stage, datasets (dict
name -> (array, units) or (array, units, attributes)) and attributes (dict of str) as
wvr.ResultGroup takes them. overwrite: replace an existing output file; replace: replace an
existing group of the same stage. Raises WvrValueError naming the file or dataset.
)doc");
  static const std::string summarize_doc = summary_doc();
  m.def(
      "summarize_night", [](const Night& night) { return summary_to_dict(summarize(night)); },
      py::arg("night"), summarize_doc.c_str());
  m.def(
      "format_night_summary",
      [](const py::object& night_or_summary) {
        if (py::isinstance<Night>(night_or_summary)) {
          return format_night_summary(summarize(night_or_summary.cast<const Night&>()));
        }
        return format_night_summary(summary_from_dict(night_or_summary));
      },
      py::arg("night_or_summary"),
      "Plain-text summary, one 'label  value' line per item, of a Night or of the dict that "
      "summarize_night returns.");
}

}  // namespace wvr::python
