// Tests of the night file: round trips, validation of broken files, result groups.
//
// Broken files are made by writing a good night and then editing it with the HDF5 C API.

#include "wvr/night_file.hpp"

#include <gtest/gtest.h>
#include <hdf5.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <fstream>
#include <iterator>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "night/night_file_detail.hpp"
#include "wvr/error.hpp"
#include "wvr/night.hpp"

namespace wvr {
namespace {

namespace fs = std::filesystem;

// A deterministic night of `antennas` x `times` x `channels` with every part filled in.
// Times run from 100 s at 1 s cadence with one 60 s gap after sample times / 2.
Night make_night(std::size_t antennas, std::size_t times, std::size_t channels) {
  std::mt19937_64 random(12345);
  std::normal_distribution<double> noise(0.0, 1.0);
  Night night;
  night.time_epoch_utc = "2031-03-14T00:00:00Z";
  for (std::size_t a = 0; a < antennas; ++a) {
    night.array.antenna_names.push_back("DA" + std::to_string(a + 1));
    night.array.position_enu_m.push_back(
        {100.0 * noise(random), 100.0 * noise(random), 0.5 * noise(random)});
    night.array.radiometer_ids.push_back("unit-" + std::to_string(700 + a));
  }
  night.array.reference_latitude_deg = -23.5;
  night.array.reference_longitude_deg = 292.25;
  night.array.reference_height_m = 4810.0;

  RadiometerConfig& config = night.radiometer.config;
  config.name = "demo 183 GHz radiometer";
  config.lo_freq_ghz = 183.31;
  config.quadrature_points_per_sideband = 7;
  for (std::size_t c = 0; c < channels; ++c) {
    RadiometerChannel channel;
    channel.name = "ch" + std::to_string(c);
    channel.if_centre_ghz = 1.0 + 2.0 * static_cast<double>(c);
    channel.bandwidth_ghz = 0.5 + 0.25 * static_cast<double>(c);
    channel.sideband = c == 1 ? Sideband::kUpper : (c == 2 ? Sideband::kLower : Sideband::kDouble);
    channel.sideband_ratio = 1.0 + 0.01 * static_cast<double>(c);
    channel.noise_k = 0.08 + 0.01 * static_cast<double>(c);
    config.channels.push_back(channel);
  }
  for (std::size_t t = 0; t < times; ++t) {
    night.radiometer.time_s.push_back(100.0 + static_cast<double>(t) +
                                      (t > times / 2 ? 60.0 : 0.0));
  }
  for (std::size_t a = 0; a < antennas; ++a) {
    for (std::size_t t = 0; t < times; ++t) {
      const bool valid = (t + 3 * a) % 37 != 0;
      night.radiometer.valid.push_back(valid ? 1 : 0);
      for (std::size_t c = 0; c < channels; ++c) {
        const double tb = 40.0 + 50.0 * static_cast<double>(c) + noise(random);
        // Invalid samples may hold NaN; every bit of it must survive.
        night.radiometer.brightness_k.push_back(valid ? tb
                                                      : std::numeric_limits<double>::quiet_NaN());
      }
      night.pointing.elevation_deg.push_back(45.0 +
                                             10.0 * std::sin(0.001 * static_cast<double>(t)));
      night.pointing.azimuth_deg.push_back(180.0 + 0.01 * static_cast<double>(t));
    }
  }
  night.scans = {{100.0, 130.0, ScanIntent::kCalibrator, "J0000-1111", 230.538},
                 {130.0, 400.0, ScanIntent::kTarget, "demo field", 230.538},
                 {410.0, 450.5, ScanIntent::kCalibrator, "J0000-1111", 345.796}};
  for (int i = 0; i < 5; ++i) {
    night.weather.time_s.push_back(100.0 + 60.0 * i);
    night.weather.temperature_k.push_back(270.0 + 0.5 * i);
    night.weather.pressure_hpa.push_back(555.0 - 0.1 * i);
    night.weather.relative_humidity_pct.push_back(20.0 + i);
  }
  for (int i = 0; i < 4; ++i) {
    for (std::int32_t a = 1; a < static_cast<std::int32_t>(antennas); ++a) {
      night.calibrator_phases.time_s.push_back(105.0 + 10.0 * i);
      night.calibrator_phases.antenna_pair.push_back({0, a});
      night.calibrator_phases.phase_rad.push_back(0.3 * noise(random));
      night.calibrator_phases.freq_ghz.push_back(230.538);
    }
  }
  NightTruth truth;
  for (std::size_t i = 0; i < antennas * times; ++i) {
    truth.wet_path_m.push_back(6.5e-3 + 1e-4 * noise(random));
    truth.dry_path_m.push_back(1.45 + 1e-5 * noise(random));
    truth.pwv_mm.push_back(1.0 + 0.02 * noise(random));
  }
  truth.episodes = {{150.0, 200.0, -1, "cloud"}, {300.0, 320.0, 0, "radiometer dropout"}};
  night.truth = std::move(truth);
  return night;
}

// A result group with one dataset of every supported type, a scalar and an empty one.
ResultGroup make_result_group(const std::string& stage, std::size_t antennas, std::size_t times) {
  ResultGroup group;
  group.stage = stage;
  group.attributes = {{"method", "demo"}, {"software", "libwvr test"}};
  std::vector<double> path_m(antennas * times);
  for (std::size_t i = 0; i < path_m.size(); ++i) path_m[i] = 1e-6 * static_cast<double>(i % 977);
  group.datasets.push_back({"path_m", {antennas, times}, path_m, "m", {{"frame", "zenith"}}});
  group.datasets.push_back({"weights", {3}, std::vector<float>{0.25f, 0.5f, 0.25f}, "1", {}});
  group.datasets.push_back(
      {"flag_code", {antennas, 2}, std::vector<std::int32_t>(antennas * 2, -7), "1", {}});
  group.datasets.push_back(
      {"sample_index", {2}, std::vector<std::int64_t>{0, 5'000'000'000}, "1", {}});
  group.datasets.push_back(
      {"flagged", {antennas}, std::vector<std::uint8_t>(antennas, 1), "1", {}});
  group.datasets.push_back({"scale", {}, std::vector<double>{1.0625}, "1", {}});
  group.datasets.push_back({"empty", {0}, std::vector<double>{}, "rad", {}});
  return group;
}

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

void expect_same(const Night& a, const Night& b) {
  EXPECT_EQ(a.time_epoch_utc, b.time_epoch_utc);
  EXPECT_EQ(a.array.antenna_names, b.array.antenna_names);
  EXPECT_EQ(a.array.position_enu_m, b.array.position_enu_m);
  EXPECT_EQ(a.array.radiometer_ids, b.array.radiometer_ids);
  EXPECT_EQ(a.array.reference_latitude_deg, b.array.reference_latitude_deg);
  EXPECT_EQ(a.array.reference_longitude_deg, b.array.reference_longitude_deg);
  EXPECT_EQ(a.array.reference_height_m, b.array.reference_height_m);
  const RadiometerConfig& ca = a.radiometer.config;
  const RadiometerConfig& cb = b.radiometer.config;
  EXPECT_EQ(ca.name, cb.name);
  EXPECT_EQ(ca.lo_freq_ghz, cb.lo_freq_ghz);
  EXPECT_EQ(ca.quadrature_points_per_sideband, cb.quadrature_points_per_sideband);
  ASSERT_EQ(ca.channels.size(), cb.channels.size());
  for (std::size_t c = 0; c < ca.channels.size(); ++c) {
    EXPECT_EQ(ca.channels[c].name, cb.channels[c].name);
    EXPECT_EQ(ca.channels[c].if_centre_ghz, cb.channels[c].if_centre_ghz);
    EXPECT_EQ(ca.channels[c].bandwidth_ghz, cb.channels[c].bandwidth_ghz);
    EXPECT_EQ(ca.channels[c].sideband, cb.channels[c].sideband);
    EXPECT_EQ(ca.channels[c].sideband_ratio, cb.channels[c].sideband_ratio);
    EXPECT_EQ(ca.channels[c].noise_k, cb.channels[c].noise_k);
  }
  EXPECT_TRUE(same_bits(a.radiometer.time_s, b.radiometer.time_s));
  EXPECT_TRUE(same_bits(a.radiometer.brightness_k, b.radiometer.brightness_k));
  EXPECT_EQ(a.radiometer.valid, b.radiometer.valid);
  EXPECT_TRUE(same_bits(a.pointing.elevation_deg, b.pointing.elevation_deg));
  EXPECT_TRUE(same_bits(a.pointing.azimuth_deg, b.pointing.azimuth_deg));
  ASSERT_EQ(a.scans.size(), b.scans.size());
  for (std::size_t i = 0; i < a.scans.size(); ++i) {
    EXPECT_EQ(a.scans[i].start_s, b.scans[i].start_s);
    EXPECT_EQ(a.scans[i].stop_s, b.scans[i].stop_s);
    EXPECT_EQ(a.scans[i].intent, b.scans[i].intent);
    EXPECT_EQ(a.scans[i].source, b.scans[i].source);
    EXPECT_EQ(a.scans[i].obs_freq_ghz, b.scans[i].obs_freq_ghz);
  }
  EXPECT_TRUE(same_bits(a.weather.time_s, b.weather.time_s));
  EXPECT_TRUE(same_bits(a.weather.temperature_k, b.weather.temperature_k));
  EXPECT_TRUE(same_bits(a.weather.pressure_hpa, b.weather.pressure_hpa));
  EXPECT_TRUE(same_bits(a.weather.relative_humidity_pct, b.weather.relative_humidity_pct));
  EXPECT_TRUE(same_bits(a.calibrator_phases.time_s, b.calibrator_phases.time_s));
  EXPECT_EQ(a.calibrator_phases.antenna_pair, b.calibrator_phases.antenna_pair);
  EXPECT_TRUE(same_bits(a.calibrator_phases.phase_rad, b.calibrator_phases.phase_rad));
  EXPECT_TRUE(same_bits(a.calibrator_phases.freq_ghz, b.calibrator_phases.freq_ghz));
  ASSERT_EQ(a.truth.has_value(), b.truth.has_value());
  if (a.truth) {
    EXPECT_TRUE(same_bits(a.truth->wet_path_m, b.truth->wet_path_m));
    EXPECT_TRUE(same_bits(a.truth->dry_path_m, b.truth->dry_path_m));
    EXPECT_TRUE(same_bits(a.truth->pwv_mm, b.truth->pwv_mm));
    ASSERT_EQ(a.truth->episodes.size(), b.truth->episodes.size());
    for (std::size_t i = 0; i < a.truth->episodes.size(); ++i) {
      EXPECT_EQ(a.truth->episodes[i].start_s, b.truth->episodes[i].start_s);
      EXPECT_EQ(a.truth->episodes[i].stop_s, b.truth->episodes[i].stop_s);
      EXPECT_EQ(a.truth->episodes[i].antenna, b.truth->episodes[i].antenna);
      EXPECT_EQ(a.truth->episodes[i].label, b.truth->episodes[i].label);
    }
  }
  ASSERT_EQ(a.results.size(), b.results.size());
  for (std::size_t g = 0; g < a.results.size(); ++g) {
    EXPECT_EQ(a.results[g].stage, b.results[g].stage);
    EXPECT_EQ(a.results[g].attributes, b.results[g].attributes);
    ASSERT_EQ(a.results[g].datasets.size(), b.results[g].datasets.size());
    for (std::size_t d = 0; d < a.results[g].datasets.size(); ++d) {
      const ResultDataset& x = a.results[g].datasets[d];
      const ResultDataset& y = b.results[g].datasets[d];
      EXPECT_EQ(x.name, y.name);
      EXPECT_EQ(x.shape, y.shape) << x.name;
      EXPECT_EQ(x.values, y.values) << x.name;  // no NaN in the test results
      EXPECT_EQ(x.units, y.units) << x.name;
      EXPECT_EQ(x.attributes, y.attributes) << x.name;
    }
  }
}

std::string file_bytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  return std::string(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

// Runs `action` and returns the InvalidInput message it throws ("" if none is thrown).
template <typename Action>
std::string invalid_input_message(Action action) {
  try {
    action();
  } catch (const InvalidInput& error) {
    return error.what();
  }
  return "";
}

class NightFileTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    dir_ = fs::temp_directory_path() /
           ("wvr-night-file-" + std::string(info->name()) + "-" + std::to_string(::getpid()));
    fs::remove_all(dir_);
    fs::create_directories(dir_);
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  }
  void TearDown() override { fs::remove_all(dir_); }

  fs::path path(const std::string& name) const { return dir_ / name; }

  // Files in the test directory (to check that no temporary file is left behind).
  std::vector<std::string> listing() const {
    std::vector<std::string> names;
    for (const auto& entry : fs::directory_iterator(dir_)) {
      names.push_back(entry.path().filename().string());
    }
    std::sort(names.begin(), names.end());
    return names;
  }

  // Writes the standard small night and returns its path.
  fs::path good_file(const std::string& name = "night.h5") {
    const fs::path file = path(name);
    write_night(make_night(3, 200, 4), file);
    return file;
  }

  fs::path dir_;
};

// RAII for an HDF5 id in the tests.
struct H5Handle {
  hid_t id;
  herr_t (*close)(hid_t);
  ~H5Handle() {
    if (id >= 0) close(id);
  }
};

void replace_double_dataset(hid_t file,
                            const char* name,
                            const std::vector<hsize_t>& dims,
                            const std::vector<double>& values,
                            const char* units) {
  ASSERT_GE(H5Ldelete(file, name, H5P_DEFAULT), 0);
  H5Handle space{H5Screate_simple(static_cast<int>(dims.size()), dims.data(), nullptr), H5Sclose};
  H5Handle dataset{
      H5Dcreate2(file, name, H5T_IEEE_F64LE, space.id, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT),
      H5Dclose};
  ASSERT_GE(dataset.id, 0);
  ASSERT_GE(H5Dwrite(dataset.id, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()),
            0);
  H5Handle type{H5Tcopy(H5T_C_S1), H5Tclose};
  H5Tset_size(type.id, H5T_VARIABLE);
  H5Handle scalar{H5Screate(H5S_SCALAR), H5Sclose};
  H5Handle attribute{H5Acreate2(dataset.id, "units", type.id, scalar.id, H5P_DEFAULT, H5P_DEFAULT),
                     H5Aclose};
  ASSERT_GE(H5Awrite(attribute.id, type.id, &units), 0);
}

void set_string_attribute(hid_t file, const char* object, const char* name, const char* value) {
  if (H5Aexists_by_name(file, object, name, H5P_DEFAULT) > 0) {
    ASSERT_GE(H5Adelete_by_name(file, object, name, H5P_DEFAULT), 0);
  }
  H5Handle type{H5Tcopy(H5T_C_S1), H5Tclose};
  H5Tset_size(type.id, H5T_VARIABLE);
  H5Handle scalar{H5Screate(H5S_SCALAR), H5Sclose};
  H5Handle attribute{H5Acreate_by_name(file, object, name, type.id, scalar.id, H5P_DEFAULT,
                                       H5P_DEFAULT, H5P_DEFAULT),
                     H5Aclose};
  ASSERT_GE(H5Awrite(attribute.id, type.id, &value), 0);
}

// Opens a copy of a good file for editing, runs `edit`, and returns the read error.
template <typename Edit>
std::string break_and_read(const fs::path& good, const fs::path& broken, Edit edit) {
  fs::copy_file(good, broken, fs::copy_options::overwrite_existing);
  {
    H5Handle file{H5Fopen(broken.c_str(), H5F_ACC_RDWR, H5P_DEFAULT), H5Fclose};
    EXPECT_GE(file.id, 0);
    edit(file.id);
  }
  return invalid_input_message([&] { read_night(broken); });
}

NightWriteOptions compressed_at(int level) {
  NightWriteOptions options;
  options.compression_level = level;
  return options;
}

NightWriteOptions overwriting() {
  NightWriteOptions options;
  options.overwrite_output = true;
  return options;
}

NightWriteOptions replacing_results() {
  NightWriteOptions options;
  options.replace_existing_results = true;
  return options;
}

TEST_F(NightFileTest, RoundTripIsBitExact) {
  Night night = make_night(3, 500, 4);
  night.results.push_back(make_result_group("retrieval", 3, 500));
  night.results.push_back(make_result_group("coefficients", 3, 500));  // not in name order
  const fs::path file = path("night.h5");
  write_night(night, file);
  const Night back = read_night(file);
  expect_same(night, back);
  EXPECT_EQ(listing(), std::vector<std::string>{"night.h5"});
}

TEST_F(NightFileTest, RoundTripOfMinimalNight) {
  Night night = make_night(1, 1, 1);
  night.scans.clear();
  night.weather = {};
  night.calibrator_phases = {};
  night.truth.reset();
  const fs::path file = path("minimal.h5");
  write_night(night, file);
  expect_same(night, read_night(file));
}

TEST_F(NightFileTest, ScaledUpRoundTrip) {
  Night night = make_night(64, 3600, 4);
  night.results.push_back(make_result_group("phase_correction", 64, 3600));
  const fs::path file = path("big.h5");
  write_night(night, file);
  expect_same(night, read_night(file));
}

herr_t collect_dataset(hid_t /*root*/, const char* name, const H5O_info_t* info, void* data) {
  if (info->type == H5O_TYPE_DATASET) static_cast<std::vector<std::string>*>(data)->push_back(name);
  return 0;
}

TEST_F(NightFileTest, StorageFollowsTheFormatDescription) {
  Night night = make_night(3, 5000, 4);
  night.results.push_back(make_result_group("retrieval", 3, 5000));
  const fs::path file = path("night.h5");
  write_night(night, file);
  H5Handle handle{H5Fopen(file.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT), H5Fclose};
  ASSERT_GE(handle.id, 0);

  // Every dataset carries a units attribute.
  std::vector<std::string> datasets;
  ASSERT_GE(
      H5Ovisit2(handle.id, H5_INDEX_NAME, H5_ITER_INC, collect_dataset, &datasets, H5O_INFO_BASIC),
      0);
  EXPECT_GE(datasets.size(), 40u);
  for (const std::string& name : datasets) {
    EXPECT_GT(H5Aexists_by_name(handle.id, name.c_str(), "units", H5P_DEFAULT), 0) << name;
  }

  // Per-sample datasets: chunks of one antenna x 4096 samples, shuffled, gzip at the default level
  // and a Fletcher-32 checksum.
  const auto expect_chunks = [&](const char* name, std::vector<hsize_t> expected) {
    H5Handle dataset{H5Dopen2(handle.id, name, H5P_DEFAULT), H5Dclose};
    H5Handle dcpl{H5Dget_create_plist(dataset.id), H5Pclose};
    std::vector<hsize_t> chunk(expected.size());
    EXPECT_EQ(H5Pget_chunk(dcpl.id, static_cast<int>(chunk.size()), chunk.data()),
              static_cast<int>(expected.size()))
        << name;
    EXPECT_EQ(chunk, expected) << name;
    ASSERT_EQ(H5Pget_nfilters(dcpl.id), 3) << name;
    unsigned flags = 0;
    std::size_t count = 1;
    unsigned level = 0;
    EXPECT_EQ(H5Pget_filter2(dcpl.id, 0, &flags, &count, &level, 0, nullptr, nullptr),
              H5Z_FILTER_SHUFFLE);
    count = 1;
    EXPECT_EQ(H5Pget_filter2(dcpl.id, 1, &flags, &count, &level, 0, nullptr, nullptr),
              H5Z_FILTER_DEFLATE);
    EXPECT_EQ(level, static_cast<unsigned>(NightWriteOptions{}.compression_level)) << name;
    count = 0;
    EXPECT_EQ(H5Pget_filter2(dcpl.id, 2, &flags, &count, nullptr, 0, nullptr, nullptr),
              H5Z_FILTER_FLETCHER32);
  };
  expect_chunks("/radiometer/brightness_k", {1, 4096, 4});
  expect_chunks("/radiometer/valid", {1, 4096});
  expect_chunks("/pointing/elevation_deg", {1, 4096});
  expect_chunks("/truth/pwv_mm", {1, 4096});
}

TEST_F(NightFileTest, UncompressedWriteRoundTrips) {
  const Night night = make_night(2, 300, 3);
  write_night(night, path("raw.h5"), compressed_at(0));
  expect_same(night, read_night(path("raw.h5")));
  const std::string message =
      invalid_input_message([&] { write_night(night, path("bad.h5"), compressed_at(10)); });
  EXPECT_NE(message.find("compression_level = 10 is outside [0, 9]"), std::string::npos) << message;
}

TEST_F(NightFileTest, WriteRefusesInvalidNightAndLeavesNoFile) {
  Night night = make_night(2, 50, 3);
  std::swap(night.radiometer.time_s[10], night.radiometer.time_s[11]);
  const std::string message = invalid_input_message([&] { write_night(night, path("bad.h5")); });
  EXPECT_NE(message.find("/radiometer/time_s is not strictly increasing at index 11 (t = 110 s "
                         "after 111 s)"),
            std::string::npos)
      << message;
  EXPECT_TRUE(listing().empty());
}

TEST_F(NightFileTest, WriteDoesNotOverwriteUnlessAsked) {
  const fs::path file = good_file();
  Night other = make_night(2, 20, 2);
  const std::string message = invalid_input_message([&] { write_night(other, file); });
  EXPECT_NE(message.find("already exists"), std::string::npos) << message;
  EXPECT_EQ(read_night(file).antenna_count(), 3u);
  write_night(other, file, overwriting());
  EXPECT_EQ(read_night(file).antenna_count(), 2u);
  EXPECT_EQ(listing(), std::vector<std::string>{"night.h5"});
}

TEST_F(NightFileTest, WriteIntoMissingDirectoryIsInvalidInput) {
  const std::string message =
      invalid_input_message([&] { write_night(make_night(1, 5, 1), path("no/such/night.h5")); });
  EXPECT_NE(message.find("does not exist"), std::string::npos) << message;
}

TEST_F(NightFileTest, MissingDatasetIsNamed) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    ASSERT_GE(H5Ldelete(file, "/radiometer/valid", H5P_DEFAULT), 0);
  });
  EXPECT_NE(message.find("broken.h5: /radiometer/valid is missing"), std::string::npos) << message;
}

TEST_F(NightFileTest, MissingGroupIsNamed) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    ASSERT_GE(H5Ldelete(file, "/weather", H5P_DEFAULT), 0);
  });
  EXPECT_NE(message.find("broken.h5: /weather is missing"), std::string::npos) << message;
}

TEST_F(NightFileTest, WrongShapeIsNamed) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    replace_double_dataset(file, "/pointing/azimuth_deg", {3, 199},
                           std::vector<double>(3 * 199, 10.0), "deg");
  });
  EXPECT_NE(message.find("/pointing/azimuth_deg has shape [3, 199], expected [antenna, time] = "
                         "[3, 200]"),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, WrongUnitsAreNamed) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    set_string_attribute(file, "/radiometer/brightness_k", "units", "mK");
  });
  EXPECT_NE(message.find("/radiometer/brightness_k has units \"mK\", expected \"K\""),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, MissingUnitsAreNamed) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    ASSERT_GE(H5Adelete_by_name(file, "/weather/pressure_hpa", "units", H5P_DEFAULT), 0);
  });
  EXPECT_NE(message.find("/weather/pressure_hpa has no attribute units"), std::string::npos)
      << message;
}

TEST_F(NightFileTest, NonMonotonicTimeIsNamedWithIndexAndValues) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    std::vector<double> time_s(200);
    for (std::size_t t = 0; t < time_s.size(); ++t) time_s[t] = static_cast<double>(t);
    time_s[150] = 148.5;
    // A hard link shares the dataset with /pointing/time_s, so both see the edit.
    H5Handle dataset{H5Dopen2(file, "/radiometer/time_s", H5P_DEFAULT), H5Dclose};
    ASSERT_GE(H5Dwrite(dataset.id, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, time_s.data()),
              0);
  });
  EXPECT_NE(message.find("broken.h5: /radiometer/time_s is not strictly increasing at index 150 "
                         "(t = 148.5 s after 149 s)"),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, UnknownSchemaVersionIsRejected) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    H5Handle attribute{H5Aopen_by_name(file, "/", "schema_version", H5P_DEFAULT, H5P_DEFAULT),
                       H5Aclose};
    const int version = 3;
    ASSERT_GE(H5Awrite(attribute.id, H5T_NATIVE_INT, &version), 0);
  });
  EXPECT_NE(message.find("schema_version = 3 is not supported; this libwvr reads schema versions 1 "
                         "to 2"),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, ForeignSchemaIsRejected) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    set_string_attribute(file, "/", "schema", "someone-else");
  });
  EXPECT_NE(message.find("attribute schema = \"someone-else\" is not \"libwvr-night\""),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, NonFinitePositionIsNamed) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    std::vector<double> positions(9, 1.0);
    positions[5] = std::numeric_limits<double>::infinity();
    replace_double_dataset(file, "/array/position_enu_m", {3, 3}, positions, "m");
  });
  EXPECT_NE(message.find("/array/position_enu_m is not finite at [1, 2] (value inf)"),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, StringsWhereNumbersBelongAreRejected) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    ASSERT_GE(H5Ldelete(file, "/scans/obs_freq_ghz", H5P_DEFAULT), 0);
    ASSERT_GE(H5Lcreate_hard(file, "/scans/source", file, "/scans/obs_freq_ghz", H5P_DEFAULT,
                             H5P_DEFAULT),
              0);
  });
  EXPECT_NE(message.find("/scans/obs_freq_ghz has string values, expected floating point"),
            std::string::npos)
      << message;
}

// Other writers (h5py by default) store variable-length strings and 64-bit integers.
TEST_F(NightFileTest, ReadsVariableLengthStringsAndWideIntegers) {
  const fs::path good = good_file();
  const fs::path foreign = path("foreign.h5");
  fs::copy_file(good, foreign);
  {
    H5Handle file{H5Fopen(foreign.c_str(), H5F_ACC_RDWR, H5P_DEFAULT), H5Fclose};
    ASSERT_GE(H5Ldelete(file.id, "/scans/source", H5P_DEFAULT), 0);
    H5Handle type{H5Tcopy(H5T_C_S1), H5Tclose};
    H5Tset_size(type.id, H5T_VARIABLE);
    H5Tset_cset(type.id, H5T_CSET_UTF8);
    const hsize_t scans = 3;
    H5Handle space{H5Screate_simple(1, &scans, nullptr), H5Sclose};
    H5Handle dataset{H5Dcreate2(file.id, "/scans/source", type.id, space.id, H5P_DEFAULT,
                                H5P_DEFAULT, H5P_DEFAULT),
                     H5Dclose};
    const char* sources[] = {"vl-one", "vl-two", "vl-three"};
    ASSERT_GE(H5Dwrite(dataset.id, type.id, H5S_ALL, H5S_ALL, H5P_DEFAULT, sources), 0);
    H5Handle scalar{H5Screate(H5S_SCALAR), H5Sclose};
    H5Handle units{H5Acreate2(dataset.id, "units", type.id, scalar.id, H5P_DEFAULT, H5P_DEFAULT),
                   H5Aclose};
    const char* one = "1";
    ASSERT_GE(H5Awrite(units.id, type.id, &one), 0);

    ASSERT_GE(H5Ldelete(file.id, "/calibrator_phases/antenna_pair", H5P_DEFAULT), 0);
    const hsize_t dims[2] = {8, 2};
    H5Handle pair_space{H5Screate_simple(2, dims, nullptr), H5Sclose};
    H5Handle pairs{H5Dcreate2(file.id, "/calibrator_phases/antenna_pair", H5T_STD_I64LE,
                              pair_space.id, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT),
                   H5Dclose};
    std::vector<std::int64_t> values(16);
    for (std::size_t i = 0; i < 8; ++i) values[2 * i + 1] = 1 + static_cast<std::int64_t>(i % 2);
    ASSERT_GE(H5Dwrite(pairs.id, H5T_NATIVE_INT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()),
              0);
    H5Handle pair_units{H5Acreate2(pairs.id, "units", type.id, scalar.id, H5P_DEFAULT, H5P_DEFAULT),
                        H5Aclose};
    ASSERT_GE(H5Awrite(pair_units.id, type.id, &one), 0);
  }
  const Night night = read_night(foreign);
  ASSERT_EQ(night.scans.size(), 3u);
  EXPECT_EQ(night.scans[2].source, "vl-three");
  ASSERT_EQ(night.calibrator_phases.antenna_pair.size(), 8u);
  EXPECT_EQ(night.calibrator_phases.antenna_pair[1], (std::array<std::int32_t, 2>{0, 2}));

  const std::string message = break_and_read(foreign, path("broken.h5"), [](hid_t file) {
    H5Handle pairs{H5Dopen2(file, "/calibrator_phases/antenna_pair", H5P_DEFAULT), H5Dclose};
    std::vector<std::int64_t> values(16, 1);
    values[0] = std::int64_t{1} << 40;
    ASSERT_GE(H5Dwrite(pairs.id, H5T_NATIVE_INT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data()),
              0);
  });
  EXPECT_NE(message.find("/calibrator_phases/antenna_pair value 1099511627776 at flat index 0 "
                         "does not fit a 32-bit integer"),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, ValidityFlagsMustBeZeroOrOne) {
  const fs::path good = good_file();
  const std::string message = break_and_read(good, path("broken.h5"), [](hid_t file) {
    H5Handle dataset{H5Dopen2(file, "/radiometer/valid", H5P_DEFAULT), H5Dclose};
    std::vector<std::uint8_t> valid(3 * 200);
    ASSERT_GE(H5Dread(dataset.id, H5T_NATIVE_UINT8, H5S_ALL, H5S_ALL, H5P_DEFAULT, valid.data()),
              0);
    valid[200 + 17] = 2;
    ASSERT_GE(H5Dwrite(dataset.id, H5T_NATIVE_UINT8, H5S_ALL, H5S_ALL, H5P_DEFAULT, valid.data()),
              0);
  });
  EXPECT_NE(message.find("/radiometer/valid = 2 at [1, 17] is not 0 or 1"), std::string::npos)
      << message;
}

TEST_F(NightFileTest, BrightnessMustBeFiniteWhereValid) {
  Night night = make_night(2, 20, 3);
  night.radiometer.valid[20 + 5] = 1;
  night.radiometer.brightness_k[(20 + 5) * 3 + 2] = std::numeric_limits<double>::quiet_NaN();
  const std::string message = invalid_input_message([&] { write_night(night, path("bad.h5")); });
  EXPECT_NE(message.find("/radiometer/brightness_k is not finite at [1, 5, 2] (value nan) where "
                         "/radiometer/valid is 1"),
            std::string::npos)
      << message;
}

TEST_F(NightFileTest, ChannelTableMustBeAValidRadiometer) {
  Night night = make_night(2, 20, 2);
  night.radiometer.config.channels[1].bandwidth_ghz = -1.0;
  EXPECT_NE(invalid_input_message([&] {
              write_night(night, path("bad.h5"));
            }).find("/radiometer/channels/bandwidth_ghz[1] = -1 GHz must be finite and positive"),
            std::string::npos);
  // Channel 1 moved onto the lower sideband of channel 0: the two bands overlap.
  night.radiometer.config.channels[1] = night.radiometer.config.channels[0];
  night.radiometer.config.channels[1].name = "copy";
  const std::string message = invalid_input_message([&] { write_night(night, path("bad.h5")); });
  EXPECT_NE(message.find("/radiometer/channels is not a valid radiometer: "), std::string::npos)
      << message;
  EXPECT_NE(message.find("overlaps"), std::string::npos) << message;
  EXPECT_TRUE(listing().empty());
}

TEST_F(NightFileTest, TruncatedFileIsInvalidInput) {
  const fs::path good = good_file();
  const std::string bytes = file_bytes(good);
  for (const std::size_t size : {std::size_t{0}, std::size_t{7}, std::size_t{100},
                                 std::size_t{2000}, bytes.size() / 2, bytes.size() - 1}) {
    const fs::path truncated = path("truncated.h5");
    {
      std::ofstream out(truncated, std::ios::binary | std::ios::trunc);
      out.write(bytes.data(), static_cast<std::streamsize>(size));
    }
    const std::string message = invalid_input_message([&] { read_night(truncated); });
    EXPECT_NE(message.find("truncated.h5: "), std::string::npos)
        << "size " << size << ": " << message;
  }
}

TEST_F(NightFileTest, NotAnHdf5FileIsInvalidInput) {
  const fs::path text = path("notes.h5");
  std::ofstream(text) << "this is a text file, not a night\n";
  const std::string message = invalid_input_message([&] { read_night(text); });
  EXPECT_NE(message.find("notes.h5: not an HDF5 file"), std::string::npos) << message;
  const std::string missing = invalid_input_message([&] { read_night(path("absent.h5")); });
  EXPECT_NE(missing.find("absent.h5: no such file"), std::string::npos) << missing;
}

TEST_F(NightFileTest, AddResultGroupLeavesInputByteIdentical) {
  Night night = make_night(4, 300, 3);
  const fs::path input = path("input.h5");
  write_night(night, input);
  const std::string before = file_bytes(input);
  const auto mtime = fs::last_write_time(input);

  const ResultGroup group = make_result_group("retrieval", 4, 300);
  const fs::path output = path("output.h5");
  add_result_group(input, output, group);

  EXPECT_EQ(file_bytes(input), before);
  EXPECT_EQ(fs::last_write_time(input), mtime);
  Night expected = night;
  expected.results.push_back(group);
  expect_same(expected, read_night(output));
  EXPECT_EQ(listing(), (std::vector<std::string>{"input.h5", "output.h5"}));

  // A second stage appends after the first.
  const fs::path output2 = path("output2.h5");
  const ResultGroup flags = make_result_group("flags", 4, 300);
  add_result_group(output, output2, flags);
  expected.results.push_back(flags);
  expect_same(expected, read_night(output2));
}

TEST_F(NightFileTest, InputReadWithAStampIsNotReadAgainAndRefusedOnceChanged) {
  Night night = make_night(4, 300, 3);
  night.results.push_back(make_result_group("flags", 4, 300));
  const fs::path input = path("input.h5");
  write_night(night, input);
  NightFileStamp stamp;
  const Night read = read_night(input, stamp);
  EXPECT_EQ(stamp, detail::current_stamp(input));
  NightWriteOptions options;
  options.input_read_with = stamp;
  const ResultGroup group = make_result_group("retrieval", 4, 300);
  const std::size_t reads_before = detail::night_file_reads;
  add_result_groups(input, path("out.h5"), {group}, options);
  EXPECT_EQ(detail::night_file_reads, reads_before);  // not read again
  Night expected = night;
  expected.results.push_back(group);
  expect_same(expected, read_night(path("out.h5")));
  // Without a stamp the input is read (validated) first.
  add_result_groups(input, path("out-unstamped.h5"), {group});
  EXPECT_EQ(detail::night_file_reads, reads_before + 2);
  // The stages the input already holds are known without reading it: a duplicate is refused.
  const std::string duplicate = invalid_input_message([&] {
    add_result_groups(input, path("dup.h5"), {make_result_group("flags", 4, 300)}, options);
  });
  EXPECT_NE(duplicate.find("/results/flags already exists"), std::string::npos) << duplicate;
  // A stamp that no read made stands for no file.
  NightWriteOptions unread;
  unread.input_read_with = NightFileStamp{};
  EXPECT_NE(invalid_input_message([&] {
              add_result_groups(input, path("u.h5"), {group}, unread);
            }).find("changed since it was read"),
            std::string::npos);

  // Replaced after it was read, even by a valid night: refused, since the results were
  // computed from the old one; nothing is written.
  fs::remove(input);
  write_night(make_night(4, 300, 3), input);
  ASSERT_NE(detail::current_stamp(input), stamp);
  const std::string changed =
      invalid_input_message([&] { add_result_groups(input, path("out2.h5"), {group}, options); });
  EXPECT_NE(changed.find(input.string() + ": changed since it was read"), std::string::npos)
      << changed;
  EXPECT_FALSE(fs::exists(path("out2.h5")));
  EXPECT_THROW(detail::current_stamp(path("missing.h5")), InvalidInput);
}

TEST_F(NightFileTest, AddResultGroupRefusesInputAsOutputAndDuplicates) {
  const fs::path input = good_file("input.h5");
  const ResultGroup group = make_result_group("retrieval", 3, 200);
  const std::string same =
      invalid_input_message([&] { add_result_group(input, input, group, overwriting()); });
  EXPECT_NE(same.find("is the input file"), std::string::npos) << same;

  const fs::path output = path("output.h5");
  add_result_group(input, output, group);
  const fs::path again = path("again.h5");
  const std::string duplicate =
      invalid_input_message([&] { add_result_group(output, again, group); });
  EXPECT_NE(duplicate.find("/results/retrieval already exists"), std::string::npos) << duplicate;

  ResultGroup replacement = group;
  replacement.datasets = {{"scale", {}, std::vector<double>{2.0}, "1", {}}};
  add_result_group(output, again, replacement, replacing_results());
  const Night back = read_night(again);
  ASSERT_EQ(back.results.size(), 1u);
  ASSERT_EQ(back.results[0].datasets.size(), 1u);
  EXPECT_EQ(std::get<std::vector<double>>(back.results[0].datasets[0].values),
            std::vector<double>{2.0});
  EXPECT_EQ(listing(), (std::vector<std::string>{"again.h5", "input.h5", "output.h5"}));
}

TEST_F(NightFileTest, AddResultGroupValidatesTheGroupAndTheInput) {
  const fs::path input = good_file("input.h5");
  ResultGroup bad;
  bad.stage = "retrieval";
  bad.datasets = {{"path_m", {3, 4}, std::vector<double>(11, 0.0), "m", {}}};
  const std::string shape =
      invalid_input_message([&] { add_result_group(input, path("out.h5"), bad); });
  EXPECT_NE(shape.find("/results/retrieval/path_m has 11 values, expected shape = [3, 4] (12)"),
            std::string::npos)
      << shape;
  bad.datasets = {{"bad/name", {1}, std::vector<double>{0.0}, "m", {}}};
  EXPECT_NE(invalid_input_message([&] {
              add_result_group(input, path("out.h5"), bad);
            }).find("invalid dataset name"),
            std::string::npos);
  bad.datasets = {{"ok", {1}, std::vector<double>{0.0}, "", {}}};
  EXPECT_NE(invalid_input_message([&] {
              add_result_group(input, path("out.h5"), bad);
            }).find("needs a units string"),
            std::string::npos);

  const fs::path broken = path("broken.h5");
  break_and_read(input, broken,
                 [](hid_t file) { ASSERT_GE(H5Ldelete(file, "/scans/intent", H5P_DEFAULT), 0); });
  const std::string message = invalid_input_message(
      [&] { add_result_group(broken, path("out.h5"), make_result_group("x", 3, 200)); });
  EXPECT_NE(message.find("broken.h5: /scans/intent is missing"), std::string::npos) << message;
  EXPECT_EQ(listing(), (std::vector<std::string>{"broken.h5", "input.h5"}));
}

TEST_F(NightFileTest, SummaryCountsScansGapsAndValidity) {
  Night night = make_night(3, 200, 4);
  night.results.push_back(make_result_group("retrieval", 3, 200));
  const NightSummary summary = summarize(night);
  EXPECT_EQ(summary.antenna_count, 3u);
  EXPECT_EQ(summary.channel_count, 4u);
  EXPECT_EQ(summary.time_count, 200u);
  EXPECT_EQ(summary.start_s, 100.0);
  EXPECT_EQ(summary.stop_s, 100.0 + 199.0 + 60.0);
  EXPECT_EQ(summary.duration_s, 259.0);
  EXPECT_EQ(summary.median_cadence_s, 1.0);
  ASSERT_EQ(summary.gaps.size(), 1u);
  EXPECT_EQ(summary.gaps[0].start_s, 200.0);  // sample 100
  EXPECT_EQ(summary.gaps[0].stop_s, 261.0);   // sample 101
  EXPECT_EQ(summary.calibrator_scan_count, 2u);
  EXPECT_EQ(summary.target_scan_count, 1u);
  EXPECT_EQ(summary.weather_count, 5u);
  EXPECT_EQ(summary.calibrator_phase_count, 8u);
  EXPECT_TRUE(summary.has_truth);
  EXPECT_EQ(summary.result_stages, std::vector<std::string>{"retrieval"});
  // Sample t of antenna a is invalid when (t + 3a) % 37 == 0: 6 of 200 for a = 0
  // (t = 0, 37, ..., 185), 5 for a = 1 (t = 34, ..., 182), 5 for a = 2 (t = 31, ..., 179).
  EXPECT_DOUBLE_EQ(summary.antenna_valid_fraction[0], 194.0 / 200.0);
  EXPECT_DOUBLE_EQ(summary.antenna_valid_fraction[1], 195.0 / 200.0);
  EXPECT_DOUBLE_EQ(summary.valid_fraction, (194.0 + 195.0 + 195.0) / 600.0);

  const std::string text = format_night_summary(summary);
  EXPECT_NE(text.find("antennas            3\n"), std::string::npos) << text;
  EXPECT_NE(text.find("gaps                1: 200-261 s\n"), std::string::npos) << text;
  EXPECT_NE(text.find("valid samples       97.3 % (lowest antenna DA1: 97.0 %)\n"),
            std::string::npos)
      << text;
  EXPECT_NE(text.find("result groups       retrieval\n"), std::string::npos) << text;
}

}  // namespace
}  // namespace wvr
