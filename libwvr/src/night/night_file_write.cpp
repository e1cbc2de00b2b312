// Writing night files: a whole night to a new file, or a copy of an existing file with
// result groups added. Both build the file under a temporary name in the destination
// directory, flush it to disk and rename it into place, so the destination path only ever
// holds a complete file.

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <chrono>
#include <csignal>
#include <cstdlib>
#include <set>
#include <string>
#include <system_error>
#include <type_traits>
#include <utility>
#include <variant>
#include <vector>

#include "night/night_file_detail.hpp"
#include "night/night_file_h5.hpp"
#include "night/night_file_site.hpp"
#include "wvr/brightness_convention.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"

namespace wvr {
namespace {

namespace fs = std::filesystem;
using detail::h5::Id;
using detail::h5::Shape;
using detail::h5::Writer;

// Flushes a file's data to disk before it is renamed into place, then the directory entry
// (POSIX fsync; common practice for atomic replacement). File systems that cannot sync
// (EINVAL) are accepted; the directory sync is best effort.
void sync_file(const fs::path& path) {
  const int fd = ::open(path.c_str(), O_RDONLY);
  if (fd < 0) throw Error(path.string() + ": cannot be opened to flush it to disk");
  const int status = ::fsync(fd);
  const int error = errno;
  ::close(fd);
  if (status != 0 && error != EINVAL) throw Error(path.string() + ": cannot be flushed to disk");
}

void sync_directory(const fs::path& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_DIRECTORY);
  if (fd < 0) return;
  ::fsync(fd);
  ::close(fd);
}

// Temporary files of `destination` are named ".<file name>.tmp-<pid>-<ticks>-<count>".
std::string temporary_prefix(const fs::path& destination) {
  return "." + destination.filename().string() + ".tmp-";
}

// Removes temporary files a killed writer left beside `destination`: only regular files of
// ours (our prefix, owned by this user) whose writing process no longer exists.
void remove_stale_temporaries(const fs::path& destination) {
  const std::string prefix = temporary_prefix(destination);
  const fs::path directory =
      destination.parent_path().empty() ? fs::path(".") : destination.parent_path();
  std::error_code ec;
  for (fs::directory_iterator it(directory, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string name = it->path().filename().string();
    if (name.compare(0, prefix.size(), prefix) != 0) continue;
    const std::string rest = name.substr(prefix.size());
    const std::size_t dash = rest.find('-');
    if (dash == 0 || dash == std::string::npos || rest.find_first_not_of("0123456789") != dash) {
      continue;
    }
    const long pid = std::strtol(rest.substr(0, dash).c_str(), nullptr, 10);
    if (pid <= 0 || pid == ::getpid() || ::kill(static_cast<pid_t>(pid), 0) == 0 ||
        errno != ESRCH) {
      continue;
    }
    struct stat info {};
    if (::lstat(it->path().c_str(), &info) != 0 || !S_ISREG(info.st_mode) ||
        info.st_uid != ::geteuid()) {
      continue;
    }
    std::error_code ignored;
    fs::remove(it->path(), ignored);
  }
}

// A file being built under a temporary name beside its destination; removed unless
// published.
class PendingFile {
 public:
  explicit PendingFile(const fs::path& destination) : destination_(destination) {
    remove_stale_temporaries(destination);
    static std::atomic<unsigned> counter{0};
    const auto ticks = std::chrono::steady_clock::now().time_since_epoch().count();
    const std::string name = temporary_prefix(destination) + std::to_string(::getpid()) + "-" +
                             std::to_string(ticks) + "-" + std::to_string(counter++);
    temporary_ = destination.parent_path() / name;
  }
  PendingFile(const PendingFile&) = delete;
  PendingFile& operator=(const PendingFile&) = delete;
  ~PendingFile() {
    if (!published_) {
      std::error_code ignored;
      fs::remove(temporary_, ignored);
    }
  }

  const fs::path& temporary() const { return temporary_; }

  void publish(bool overwrite) {
    sync_file(temporary_);
    std::error_code ec;
    if (!overwrite && fs::exists(destination_, ec)) {
      throw InvalidInput(destination_.string() +
                         " already exists (set overwrite_output to replace it)");
    }
    fs::rename(temporary_, destination_, ec);
    if (ec) throw Error(destination_.string() + ": cannot be put in place: " + ec.message());
    published_ = true;
    sync_directory(destination_.parent_path().empty() ? fs::path(".") : destination_.parent_path());
  }

 private:
  fs::path destination_;
  fs::path temporary_;
  bool published_ = false;
};

// Checks the destination before any work is done.
void check_output(const fs::path& output, const NightWriteOptions& options, const fs::path* input) {
  const std::string name = output.string();
  if (options.compression_level < 0 || options.compression_level > 9) {
    throw InvalidInput(name + ": compression_level = " + std::to_string(options.compression_level) +
                       " is outside [0, 9]");
  }
  if (options.threads < 0) {
    throw InvalidInput(name + ": threads = " + std::to_string(options.threads) +
                       " is negative (0 means all cores)");
  }
  if (!output.has_filename()) throw InvalidInput(name + ": output path names no file");
  const fs::path directory = output.parent_path().empty() ? fs::path(".") : output.parent_path();
  std::error_code ec;
  if (!fs::is_directory(directory, ec)) {
    throw InvalidInput(name + ": directory " + directory.string() + " does not exist");
  }
  if (!fs::exists(output, ec)) return;
  if (fs::is_directory(output, ec)) throw InvalidInput(name + ": is a directory");
  // A FIFO or a device node would be replaced by the rename; only files are ever replaced.
  if (!fs::is_regular_file(output, ec)) {
    throw InvalidInput(name + ": is not a regular file; only regular files are replaced");
  }
  if (input != nullptr && fs::equivalent(*input, output, ec)) {
    throw InvalidInput(name + ": is the input file; results are written to a new file");
  }
  if (!options.overwrite_output) {
    throw InvalidInput(name + " already exists (set overwrite_output to replace it)");
  }
}

Shape shape_of(std::initializer_list<std::size_t> dims) {
  Shape shape;
  for (std::size_t n : dims) shape.push_back(n);
  return shape;
}

void write_doubles(const Writer& writer,
                   const std::string& path,
                   const std::vector<double>& values,
                   const Shape& shape,
                   bool per_sample,
                   const std::string& units) {
  const Shape chunk = per_sample ? detail::h5::per_sample_chunk(shape)
                                 : detail::h5::generic_chunk(shape, sizeof(double));
  writer.write_array(path, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data(), shape, chunk, units);
}

void write_int32s(const Writer& writer,
                  const std::string& path,
                  const std::vector<std::int32_t>& values,
                  const Shape& shape) {
  writer.write_array(path, H5T_STD_I32LE, H5T_NATIVE_INT32, values.data(), shape,
                     detail::h5::generic_chunk(shape, sizeof(std::int32_t)), "1");
}

void write_array_group(const Writer& writer, const Night& night) {
  const NightArray& array = night.array;
  Id group = writer.create_group(writer.file(), "/array", false);
  writer.double_attribute(group.get(), "/array", "reference_latitude_deg",
                          array.reference_latitude_deg);
  writer.double_attribute(group.get(), "/array", "reference_longitude_deg",
                          array.reference_longitude_deg);
  writer.double_attribute(group.get(), "/array", "reference_height_m", array.reference_height_m);
  writer.write_strings("/array/antenna_names", array.antenna_names, "1");
  writer.write_array("/array/position_enu_m", H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE,
                     array.position_enu_m.data(), shape_of({array.position_enu_m.size(), 3}), {},
                     "m");
  writer.write_strings("/array/radiometer_id", array.radiometer_ids, "1");
}

void write_radiometer_group(const Writer& writer, const Night& night) {
  const RadiometerConfig& config = night.radiometer.config;
  Id group = writer.create_group(writer.file(), "/radiometer", false);
  writer.string_attribute(group.get(), "/radiometer", "name", config.name);
  writer.double_attribute(group.get(), "/radiometer", "lo_freq_ghz", config.lo_freq_ghz);
  // The in-memory night always holds Rayleigh-Jeans-equivalent brightness.
  writer.string_attribute(group.get(), "/radiometer", detail::kBrightnessConventionAttribute,
                          to_string(BrightnessConvention::kRayleighJeansEquivalent));
  writer.int_attribute(group.get(), "/radiometer", "quadrature_points_per_sideband",
                       config.quadrature_points_per_sideband);
  writer.create_group(writer.file(), "/radiometer/channels", false);
  std::vector<std::string> names, sidebands;
  std::vector<double> if_centre, bandwidth, ratio, noise;
  for (const RadiometerChannel& channel : config.channels) {
    names.push_back(channel.name);
    if_centre.push_back(channel.if_centre_ghz);
    bandwidth.push_back(channel.bandwidth_ghz);
    sidebands.push_back(detail::sideband_name(channel.sideband));
    ratio.push_back(channel.sideband_ratio);
    noise.push_back(channel.noise_k);
  }
  const Shape channels = shape_of({config.channels.size()});
  writer.write_strings("/radiometer/channels/name", names, "1");
  write_doubles(writer, "/radiometer/channels/if_centre_ghz", if_centre, channels, false, "GHz");
  write_doubles(writer, "/radiometer/channels/bandwidth_ghz", bandwidth, channels, false, "GHz");
  writer.write_strings("/radiometer/channels/sideband", sidebands, "1");
  write_doubles(writer, "/radiometer/channels/sideband_ratio", ratio, channels, false, "1");
  write_doubles(writer, "/radiometer/channels/noise_k", noise, channels, false, "K");

  const std::size_t antennas = night.antenna_count();
  const std::size_t times = night.time_count();
  write_doubles(writer, "/radiometer/time_s", night.radiometer.time_s, shape_of({times}), false,
                "s");
  write_doubles(writer, "/radiometer/brightness_k", night.radiometer.brightness_k,
                shape_of({antennas, times, config.channels.size()}), true, "K");
  const Shape per_sample = shape_of({antennas, times});
  writer.write_array("/radiometer/valid", H5T_STD_U8LE, H5T_NATIVE_UINT8,
                     night.radiometer.valid.data(), per_sample,
                     detail::h5::per_sample_chunk(per_sample), "1");
}

void write_pointing_group(const Writer& writer, const Night& night) {
  writer.create_group(writer.file(), "/pointing", false);
  // Pointing is sampled at the radiometer times: share that dataset rather than copy it.
  if (H5Lcreate_hard(writer.file(), "/radiometer/time_s", writer.file(), "/pointing/time_s",
                     H5P_DEFAULT, H5P_DEFAULT) < 0) {
    writer.fail("/pointing/time_s", "cannot be linked to /radiometer/time_s");
  }
  const Shape shape = shape_of({night.antenna_count(), night.time_count()});
  write_doubles(writer, "/pointing/elevation_deg", night.pointing.elevation_deg, shape, true,
                "deg");
  write_doubles(writer, "/pointing/azimuth_deg", night.pointing.azimuth_deg, shape, true, "deg");
}

void write_scans_group(const Writer& writer, const Night& night) {
  writer.create_group(writer.file(), "/scans", false);
  std::vector<double> start_s, stop_s, freq_ghz;
  std::vector<std::string> intent, source;
  for (const Scan& scan : night.scans) {
    start_s.push_back(scan.start_s);
    stop_s.push_back(scan.stop_s);
    intent.push_back(to_string(scan.intent));
    source.push_back(scan.source);
    freq_ghz.push_back(scan.obs_freq_ghz);
  }
  const Shape shape = shape_of({night.scans.size()});
  write_doubles(writer, "/scans/start_s", start_s, shape, false, "s");
  write_doubles(writer, "/scans/stop_s", stop_s, shape, false, "s");
  writer.write_strings("/scans/intent", intent, "1");
  writer.write_strings("/scans/source", source, "1");
  write_doubles(writer, "/scans/obs_freq_ghz", freq_ghz, shape, false, "GHz");
}

void write_weather_group(const Writer& writer, const Night& night) {
  const NightWeather& weather = night.weather;
  writer.create_group(writer.file(), "/weather", false);
  const Shape shape = shape_of({weather.time_s.size()});
  write_doubles(writer, "/weather/time_s", weather.time_s, shape, false, "s");
  write_doubles(writer, "/weather/temperature_k", weather.temperature_k, shape, false, "K");
  write_doubles(writer, "/weather/pressure_hpa", weather.pressure_hpa, shape, false, "hPa");
  write_doubles(writer, "/weather/relative_humidity_pct", weather.relative_humidity_pct, shape,
                false, "%");
}

void write_calibrator_phases_group(const Writer& writer, const Night& night) {
  const CalibratorPhases& phases = night.calibrator_phases;
  writer.create_group(writer.file(), "/calibrator_phases", false);
  const std::size_t rows = phases.time_s.size();
  write_doubles(writer, "/calibrator_phases/time_s", phases.time_s, shape_of({rows}), false, "s");
  std::vector<std::int32_t> pairs;
  pairs.reserve(2 * rows);
  for (const auto& pair : phases.antenna_pair) pairs.insert(pairs.end(), pair.begin(), pair.end());
  write_int32s(writer, "/calibrator_phases/antenna_pair", pairs, shape_of({rows, 2}));
  write_doubles(writer, "/calibrator_phases/phase_rad", phases.phase_rad, shape_of({rows}), false,
                "rad");
  write_doubles(writer, "/calibrator_phases/freq_ghz", phases.freq_ghz, shape_of({rows}), false,
                "GHz");
}

void write_truth_group(const Writer& writer, const Night& night) {
  if (!night.truth) return;
  const NightTruth& truth = *night.truth;
  const Id group = writer.create_group(writer.file(), "/truth", false);
  for (const auto& [name, value] : truth.sky_differences)
    writer.string_attribute(group.get(), "/truth", detail::kTrueSkyAttributePrefix + name, value);
  if (!truth.calibration_offset_k.empty()) {
    const Shape per_channel = shape_of({night.antenna_count(), night.channel_count()});
    write_doubles(writer, "/truth/calibration_offset_k", truth.calibration_offset_k, per_channel,
                  false, "K");
    write_doubles(writer, "/truth/calibration_gain", truth.calibration_gain, per_channel, false,
                  "1");
    write_doubles(writer, "/truth/calibration_offset_drift_k_per_hour",
                  truth.calibration_offset_drift_k_per_hour, per_channel, false, "K/h");
    write_doubles(writer, "/truth/calibration_gain_drift_per_hour",
                  truth.calibration_gain_drift_per_hour, per_channel, false, "1/h");
  }
  const Shape shape = shape_of({night.antenna_count(), night.time_count()});
  write_doubles(writer, "/truth/wet_path_m", truth.wet_path_m, shape, true, "m");
  write_doubles(writer, "/truth/dry_path_m", truth.dry_path_m, shape, true, "m");
  write_doubles(writer, "/truth/pwv_mm", truth.pwv_mm, shape, true, "mm");
  writer.create_group(writer.file(), "/truth/episodes", false);
  std::vector<double> start_s, stop_s;
  std::vector<std::int32_t> antenna;
  std::vector<std::string> label;
  for (const TruthEpisode& episode : truth.episodes) {
    start_s.push_back(episode.start_s);
    stop_s.push_back(episode.stop_s);
    antenna.push_back(episode.antenna);
    label.push_back(episode.label);
  }
  const Shape rows = shape_of({truth.episodes.size()});
  write_doubles(writer, "/truth/episodes/start_s", start_s, rows, false, "s");
  write_doubles(writer, "/truth/episodes/stop_s", stop_s, rows, false, "s");
  write_int32s(writer, "/truth/episodes/antenna", antenna, rows);
  writer.write_strings("/truth/episodes/label", label, "1");
}

// HDF5 file and memory types of a result value type.
template <typename T>
std::pair<hid_t, hid_t> result_types() {
  if constexpr (std::is_same_v<T, double>) {
    return {H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE};
  } else if constexpr (std::is_same_v<T, float>) {
    return {H5T_IEEE_F32LE, H5T_NATIVE_FLOAT};
  } else if constexpr (std::is_same_v<T, std::int32_t>) {
    return {H5T_STD_I32LE, H5T_NATIVE_INT32};
  } else if constexpr (std::is_same_v<T, std::int64_t>) {
    return {H5T_STD_I64LE, H5T_NATIVE_INT64};
  } else {
    static_assert(std::is_same_v<T, std::uint8_t>, "every ResultValues type is mapped");
    return {H5T_STD_U8LE, H5T_NATIVE_UINT8};
  }
}

void write_result_group(const Writer& writer, const ResultGroup& group) {
  const std::string path = "/results/" + group.stage;
  Id handle = writer.create_group(writer.file(), path, true);
  for (const auto& [name, value] : group.attributes) {
    writer.string_attribute(handle.get(), path, name, value);
  }
  for (const ResultDataset& dataset : group.datasets) {
    const std::string dataset_path = path + "/" + dataset.name;
    Shape shape;
    for (std::size_t n : dataset.shape) shape.push_back(n);
    Id written = std::visit(
        [&](const auto& values) {
          using T = typename std::decay_t<decltype(values)>::value_type;
          const auto [file_type, memory_type] = result_types<T>();
          return writer.write_array(dataset_path, file_type, memory_type, values.data(), shape,
                                    detail::h5::generic_chunk(shape, sizeof(T)), dataset.units);
        },
        dataset.values);
    for (const auto& [name, value] : dataset.attributes) {
      writer.string_attribute(written.get(), dataset_path, name, value);
    }
  }
}

void ensure_results_group(const Writer& writer) {
  const htri_t found = H5Lexists(writer.file(), "/results", H5P_DEFAULT);
  if (found < 0) writer.fail("/results", "cannot be looked up");
  if (found == 0) writer.create_group(writer.file(), "/results", true);
}

}  // namespace

void write_night(const Night& night, const fs::path& path, const NightWriteOptions& options) {
  const detail::h5::QuietErrors quiet;
  validate_night(night, "night to write to " + path.string());
  check_output(path, options, nullptr);
  PendingFile pending(path);
  {
    Writer writer({}, path.string(), options.compression_level, options.threads);
    Id root(H5Gopen2(writer.file(), "/", H5P_DEFAULT), H5Gclose);
    writer.string_attribute(root.get(), "/", "schema", kNightSchemaName);
    writer.int_attribute(root.get(), "/", "schema_version", kNightSchemaVersion);
    writer.string_attribute(root.get(), "/", "time_epoch_utc", night.time_epoch_utc);
    write_array_group(writer, night);
    write_radiometer_group(writer, night);
    write_pointing_group(writer, night);
    write_scans_group(writer, night);
    write_weather_group(writer, night);
    write_calibrator_phases_group(writer, night);
    write_truth_group(writer, night);
    detail::write_site_group(writer, night);
    if (!night.results.empty()) {
      ensure_results_group(writer);
      for (const ResultGroup& group : night.results) write_result_group(writer, group);
    }
    root.reset();
    writer.close_into(pending.temporary());
  }
  pending.publish(options.overwrite_output);
}

void add_result_groups(const fs::path& input,
                       const fs::path& output,
                       const std::vector<ResultGroup>& groups,
                       const NightWriteOptions& options) {
  const detail::h5::QuietErrors quiet;
  check_output(output, options, &input);
  // The whole input is validated (here, or by the caller who read it with the stamp it still
  // has), so results are never added to a file readers would reject; the stamp then guards the
  // bytes copied below.
  NightFileStamp validated;
  std::set<std::string> existing, added;
  if (options.input_read_with) {
    validated = *options.input_read_with;
    if (detail::current_stamp(input) != validated) {
      throw InvalidInput(input.string() +
                         ": changed since it was read (device, inode, size or times differ), "
                         "so results computed from it would belong to another file");
    }
    const detail::h5::Reader reader(input);
    if (reader.exists("/results")) {
      const Id results = reader.open_group("/results");
      for (const std::string& stage : reader.member_names(results.get(), "/results"))
        existing.insert(stage);
    }
  } else {
    for (const ResultGroup& group :
         read_night(input, validated, {.threads = options.threads}).results)
      existing.insert(group.stage);
  }
  for (const ResultGroup& group : groups) {
    detail::validate_result_group(group, "result group for " + output.string());
    if (!added.insert(group.stage).second) {
      throw InvalidInput("result group for " + output.string() + ": /results/" + group.stage +
                         " is given twice");
    }
    if (existing.count(group.stage) > 0 && !options.replace_existing_results) {
      throw InvalidInput(input.string() + ": /results/" + group.stage +
                         " already exists (set replace_existing_results to replace it)");
    }
  }

  PendingFile pending(output);
  {
    Writer writer(input, output.string(), options.compression_level, options.threads);
    // The bytes copied above are the ones validated only if the file is unchanged.
    if (detail::current_stamp(input) != validated) {
      throw InvalidInput(input.string() + ": changed while results were being added to a copy");
    }
    ensure_results_group(writer);
    for (const ResultGroup& group : groups) {
      if (existing.count(group.stage) > 0) writer.delete_link("/results/" + group.stage);
      write_result_group(writer, group);
    }
    writer.close_into(pending.temporary());
  }
  pending.publish(options.overwrite_output);
}

void add_result_group(const fs::path& input,
                      const fs::path& output,
                      const ResultGroup& group,
                      const NightWriteOptions& options) {
  add_result_groups(input, output, {group}, options);
}

}  // namespace wvr
