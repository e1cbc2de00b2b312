// Reading night files (schema described in libwvr/FORMAT.md).

#include <atomic>
#include <cstring>
#include <string>
#include <vector>

#include "night/night_file_detail.hpp"
#include "night/night_file_h5.hpp"
#include "night/night_file_site.hpp"
#include "wvr/brightness_convention.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"

namespace wvr {
namespace {

using detail::h5::Axis;
using detail::h5::Id;
using detail::h5::Reader;

// Counts that fix the shapes of the per-sample datasets.
struct Dims {
  Axis antenna{"antenna", 0};
  Axis time{"time", 0};
  Axis channel{"channel", 0};
};

void read_schema(const Reader& reader, Night& night) {
  Id root(H5Gopen2(reader.file(), "/", H5P_DEFAULT), H5Gclose);
  if (root.get() < 0) reader.fail("/", "cannot be opened");
  if (!reader.has_attribute(root.get(), "schema")) {
    reader.fail("/", "has no attribute schema; not a libwvr night file");
  }
  const std::string schema = reader.string_attribute(root.get(), "/", "schema");
  if (schema != kNightSchemaName) {
    reader.fail("/", "attribute schema = \"" + schema + "\" is not \"" + kNightSchemaName +
                         "\"; not a libwvr night file");
  }
  const std::int64_t version = reader.int_attribute(root.get(), "/", "schema_version");
  if (version < kOldestReadableNightSchemaVersion || version > kNightSchemaVersion) {
    reader.fail("/", "attribute schema_version = " + std::to_string(version) +
                         " is not supported; this libwvr reads schema versions " +
                         std::to_string(kOldestReadableNightSchemaVersion) + " to " +
                         std::to_string(kNightSchemaVersion));
  }
  night.time_epoch_utc = reader.string_attribute(root.get(), "/", "time_epoch_utc");
}

void read_array(const Reader& reader, Night& night, Dims& dims) {
  Id group = reader.open_group("/array");
  NightArray& array = night.array;
  array.reference_latitude_deg =
      reader.double_attribute(group.get(), "/array", "reference_latitude_deg");
  array.reference_longitude_deg =
      reader.double_attribute(group.get(), "/array", "reference_longitude_deg");
  array.reference_height_m = reader.double_attribute(group.get(), "/array", "reference_height_m");
  dims.antenna.size = reader.length("/array/antenna_names");
  array.antenna_names = reader.read_strings("/array/antenna_names", {dims.antenna}, "1");
  const std::vector<double> positions =
      reader.read_doubles("/array/position_enu_m", {dims.antenna, {"east/north/up", 3}}, "m");
  static_assert(sizeof(std::array<double, 3>) == 3 * sizeof(double));
  array.position_enu_m.resize(dims.antenna.size);
  if (!positions.empty()) {
    std::memcpy(array.position_enu_m.data(), positions.data(), positions.size() * sizeof(double));
  }
  array.radiometer_ids = reader.read_strings("/array/radiometer_id", {dims.antenna}, "1");
}

void read_radiometer(const Reader& reader, Night& night, Dims& dims) {
  Id group = reader.open_group("/radiometer");
  RadiometerConfig& config = night.radiometer.config;
  config.name = reader.string_attribute(group.get(), "/radiometer", "name");
  config.lo_freq_ghz = reader.double_attribute(group.get(), "/radiometer", "lo_freq_ghz");
  const std::int64_t points =
      reader.int_attribute(group.get(), "/radiometer", "quadrature_points_per_sideband");
  if (points < 1 || points > 1000) {
    reader.fail("/radiometer", "attribute quadrature_points_per_sideband = " +
                                   std::to_string(points) + " is outside [1, 1000]");
  }
  config.quadrature_points_per_sideband = static_cast<int>(points);

  const std::string table = "/radiometer/channels/";
  dims.channel.size = reader.length(table + "name");
  const auto names = reader.read_strings(table + "name", {dims.channel}, "1");
  const auto if_centre = reader.read_doubles(table + "if_centre_ghz", {dims.channel}, "GHz");
  const auto bandwidth = reader.read_doubles(table + "bandwidth_ghz", {dims.channel}, "GHz");
  const auto sidebands = reader.read_strings(table + "sideband", {dims.channel}, "1");
  const auto ratio = reader.read_doubles(table + "sideband_ratio", {dims.channel}, "1");
  const auto noise = reader.read_doubles(table + "noise_k", {dims.channel}, "K");
  config.channels.resize(dims.channel.size);
  for (std::size_t c = 0; c < config.channels.size(); ++c) {
    RadiometerChannel& channel = config.channels[c];
    channel.name = names[c];
    channel.if_centre_ghz = if_centre[c];
    channel.bandwidth_ghz = bandwidth[c];
    const auto sideband = detail::parse_sideband(sidebands[c]);
    if (!sideband) {
      reader.fail(table + "sideband", "entry " + std::to_string(c) + " = \"" + sidebands[c] +
                                          "\" is not \"double\", \"upper\" or \"lower\"");
    }
    channel.sideband = *sideband;
    channel.sideband_ratio = ratio[c];
    channel.noise_k = noise[c];
  }

  dims.time.size = reader.length("/radiometer/time_s");
  night.radiometer.time_s = reader.read_doubles("/radiometer/time_s", {dims.time}, "s");
  night.radiometer.brightness_k =
      reader.read_doubles("/radiometer/brightness_k", {dims.antenna, dims.time, dims.channel}, "K");
  night.radiometer.valid = reader.read_uint8s("/radiometer/valid", {dims.antenna, dims.time}, "1");
  // Files written before the attribute existed hold Rayleigh-Jeans-equivalent brightness.
  const char* attribute = detail::kBrightnessConventionAttribute;
  if (reader.has_attribute(group.get(), attribute)) {
    const std::string name = reader.string_attribute(group.get(), "/radiometer", attribute);
    if (name == to_string(BrightnessConvention::kPlanck)) {
      planck_to_rj_equivalent(config, night.radiometer.brightness_k);
    } else if (name != to_string(BrightnessConvention::kRayleighJeansEquivalent)) {
      reader.fail("/radiometer", std::string("attribute ") + attribute + " = \"" + name +
                                     "\" is not \"rayleigh_jeans_equivalent\" or \"planck\"");
    }
  }
}

void read_pointing(const Reader& reader, Night& night, const Dims& dims) {
  reader.open_group("/pointing");
  // Normally a hard link to /radiometer/time_s; a copy must hold the same times.
  const auto time_s = reader.read_doubles("/pointing/time_s", {dims.time}, "s");
  for (std::size_t t = 0; t < time_s.size(); ++t) {
    if (std::memcmp(&time_s[t], &night.radiometer.time_s[t], sizeof(double)) != 0) {
      reader.fail("/pointing/time_s", "differs from /radiometer/time_s at index " +
                                          std::to_string(t) + " (" +
                                          detail::format_number(time_s[t]) + " s vs " +
                                          detail::format_number(night.radiometer.time_s[t]) +
                                          " s); pointing is sampled at the radiometer times");
    }
  }
  night.pointing.elevation_deg =
      reader.read_doubles("/pointing/elevation_deg", {dims.antenna, dims.time}, "deg");
  night.pointing.azimuth_deg =
      reader.read_doubles("/pointing/azimuth_deg", {dims.antenna, dims.time}, "deg");
}

void read_scans(const Reader& reader, Night& night) {
  reader.open_group("/scans");
  const Axis scan{"scan", reader.length("/scans/start_s")};
  const auto start_s = reader.read_doubles("/scans/start_s", {scan}, "s");
  const auto stop_s = reader.read_doubles("/scans/stop_s", {scan}, "s");
  const auto intent = reader.read_strings("/scans/intent", {scan}, "1");
  auto source = reader.read_strings("/scans/source", {scan}, "1");
  const auto freq_ghz = reader.read_doubles("/scans/obs_freq_ghz", {scan}, "GHz");
  night.scans.resize(scan.size);
  for (std::size_t i = 0; i < night.scans.size(); ++i) {
    const auto parsed = detail::parse_intent(intent[i]);
    if (!parsed) {
      reader.fail("/scans/intent", "entry " + std::to_string(i) + " = \"" + intent[i] +
                                       "\" is not \"calibrator\" or \"target\"");
    }
    night.scans[i] = Scan{start_s[i], stop_s[i], *parsed, std::move(source[i]), freq_ghz[i]};
  }
}

void read_weather(const Reader& reader, Night& night) {
  reader.open_group("/weather");
  const Axis row{"weather", reader.length("/weather/time_s")};
  NightWeather& weather = night.weather;
  weather.time_s = reader.read_doubles("/weather/time_s", {row}, "s");
  weather.temperature_k = reader.read_doubles("/weather/temperature_k", {row}, "K");
  weather.pressure_hpa = reader.read_doubles("/weather/pressure_hpa", {row}, "hPa");
  weather.relative_humidity_pct = reader.read_doubles("/weather/relative_humidity_pct", {row}, "%");
}

void read_calibrator_phases(const Reader& reader, Night& night) {
  reader.open_group("/calibrator_phases");
  const Axis row{"row", reader.length("/calibrator_phases/time_s")};
  CalibratorPhases& phases = night.calibrator_phases;
  phases.time_s = reader.read_doubles("/calibrator_phases/time_s", {row}, "s");
  const auto pairs = reader.read_int32s("/calibrator_phases/antenna_pair", {row, {"pair", 2}}, "1");
  phases.antenna_pair.resize(row.size);
  for (std::size_t i = 0; i < row.size; ++i) {
    phases.antenna_pair[i] = {pairs[2 * i], pairs[2 * i + 1]};
  }
  phases.phase_rad = reader.read_doubles("/calibrator_phases/phase_rad", {row}, "rad");
  phases.freq_ghz = reader.read_doubles("/calibrator_phases/freq_ghz", {row}, "GHz");
}

void read_truth(const Reader& reader, Night& night, const Dims& dims) {
  if (!reader.exists("/truth")) return;
  const Id group = reader.open_group("/truth");
  NightTruth truth;
  for (const std::string& name : reader.attribute_names(group.get(), "/truth")) {
    if (name.rfind(detail::kTrueSkyAttributePrefix, 0) != 0) continue;
    truth.sky_differences.emplace_back(
        name.substr(std::string(detail::kTrueSkyAttributePrefix).size()),
        reader.string_attribute(group.get(), "/truth", name));
  }
  if (reader.exists("/truth/calibration_offset_k")) {
    const std::vector<Axis> axes = {dims.antenna, dims.channel};
    truth.calibration_offset_k = reader.read_doubles("/truth/calibration_offset_k", axes, "K");
    truth.calibration_gain = reader.read_doubles("/truth/calibration_gain", axes, "1");
    truth.calibration_offset_drift_k_per_hour =
        reader.read_doubles("/truth/calibration_offset_drift_k_per_hour", axes, "K/h");
    truth.calibration_gain_drift_per_hour =
        reader.read_doubles("/truth/calibration_gain_drift_per_hour", axes, "1/h");
  }
  truth.wet_path_m = reader.read_doubles("/truth/wet_path_m", {dims.antenna, dims.time}, "m");
  truth.dry_path_m = reader.read_doubles("/truth/dry_path_m", {dims.antenna, dims.time}, "m");
  truth.pwv_mm = reader.read_doubles("/truth/pwv_mm", {dims.antenna, dims.time}, "mm");
  reader.open_group("/truth/episodes");
  const Axis row{"episode", reader.length("/truth/episodes/start_s")};
  const auto start_s = reader.read_doubles("/truth/episodes/start_s", {row}, "s");
  const auto stop_s = reader.read_doubles("/truth/episodes/stop_s", {row}, "s");
  const auto antenna = reader.read_int32s("/truth/episodes/antenna", {row}, "1");
  auto label = reader.read_strings("/truth/episodes/label", {row}, "1");
  for (std::size_t i = 0; i < row.size; ++i) {
    truth.episodes.push_back({start_s[i], stop_s[i], antenna[i], std::move(label[i])});
  }
  night.truth = std::move(truth);
}

template <typename T>
std::vector<T> read_values(const Reader& reader,
                           hid_t dataset,
                           const std::string& path,
                           hid_t memory_type,
                           std::size_t count) {
  std::vector<T> values(count);
  if (count > 0) reader.read_raw(dataset, path, memory_type, values.data());
  return values;
}

ResultDataset read_result_dataset(const Reader& reader,
                                  const std::string& path,
                                  const std::string& name) {
  Id dataset = reader.open_dataset(path);
  ResultDataset result;
  result.name = name;
  for (hsize_t n : reader.shape(dataset.get(), path)) result.shape.push_back(n);
  const std::size_t count = result.element_count();
  Id type(H5Dget_type(dataset.get()), H5Tclose);
  if (type.get() < 0) reader.fail(path, "has an unreadable type");
  const H5T_class_t type_class = H5Tget_class(type.get());
  const std::size_t size = H5Tget_size(type.get());
  const bool is_signed = type_class == H5T_INTEGER && H5Tget_sign(type.get()) == H5T_SGN_2;
  if (type_class == H5T_FLOAT && size == 8) {
    result.values = read_values<double>(reader, dataset.get(), path, H5T_NATIVE_DOUBLE, count);
  } else if (type_class == H5T_FLOAT && size == 4) {
    result.values = read_values<float>(reader, dataset.get(), path, H5T_NATIVE_FLOAT, count);
  } else if (type_class == H5T_INTEGER && is_signed && size == 4) {
    result.values = read_values<std::int32_t>(reader, dataset.get(), path, H5T_NATIVE_INT32, count);
  } else if (type_class == H5T_INTEGER && is_signed && size == 8) {
    result.values = read_values<std::int64_t>(reader, dataset.get(), path, H5T_NATIVE_INT64, count);
  } else if (type_class == H5T_INTEGER && !is_signed && size == 1) {
    result.values = read_values<std::uint8_t>(reader, dataset.get(), path, H5T_NATIVE_UINT8, count);
  } else {
    reader.fail(path,
                "has an unsupported type (result datasets hold float64, float32, int32, "
                "int64 or uint8 values)");
  }
  result.units = reader.string_attribute(dataset.get(), path, "units");
  for (const std::string& attribute : reader.attribute_names(dataset.get(), path)) {
    if (attribute == "units") continue;
    result.attributes[attribute] = reader.string_attribute(dataset.get(), path, attribute);
  }
  return result;
}

void read_results(const Reader& reader, Night& night) {
  if (!reader.exists("/results")) return;
  Id results = reader.open_group("/results");
  for (const std::string& stage : reader.member_names(results.get(), "/results")) {
    const std::string path = "/results/" + stage;
    if (!reader.is_group(path))
      reader.fail(path, "is a dataset; /results holds one group per stage");
    Id group = reader.open_group(path);
    ResultGroup result;
    result.stage = stage;
    for (const std::string& attribute : reader.attribute_names(group.get(), path)) {
      result.attributes[attribute] = reader.string_attribute(group.get(), path, attribute);
    }
    for (const std::string& name : reader.member_names(group.get(), path)) {
      const std::string dataset_path = path + "/" + name;
      if (reader.is_group(dataset_path)) {
        reader.fail(dataset_path, "is a group; result groups hold datasets only");
      }
      result.datasets.push_back(read_result_dataset(reader, dataset_path, name));
    }
    night.results.push_back(std::move(result));
  }
}

}  // namespace

namespace detail {
std::atomic<std::size_t> night_file_reads{0};
}  // namespace detail

Night read_night(const std::filesystem::path& path, const NightReadOptions& options) {
  ++detail::night_file_reads;
  const detail::h5::QuietErrors quiet;
  const Reader reader(path, options.threads);
  Night night;
  Dims dims;
  read_schema(reader, night);
  read_array(reader, night, dims);
  read_radiometer(reader, night, dims);
  read_pointing(reader, night, dims);
  read_scans(reader, night);
  read_weather(reader, night);
  read_calibrator_phases(reader, night);
  read_truth(reader, night, dims);
  detail::read_site_group(reader, night);
  read_results(reader, night);
  validate_night(night, reader.source());
  return night;
}

Night read_night(const std::filesystem::path& path,
                 NightFileStamp& stamp,
                 const NightReadOptions& options) {
  const NightFileStamp before = detail::current_stamp(path);
  Night night = read_night(path, options);
  if (detail::current_stamp(path) != before) {
    throw InvalidInput(path.string() + ": changed while it was being read");
  }
  stamp = before;
  return night;
}

}  // namespace wvr
