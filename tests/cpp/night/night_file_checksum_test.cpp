// Every dataset of a night file carries a Fletcher-32 checksum, and a single flipped byte in
// any dataset's stored values is refused with the dataset named.
#include <gtest/gtest.h>
#include <hdf5.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

namespace fs = std::filesystem;

Night small_night() {
  const Scenario scenario = parse_scenario(R"(
name = "checksum night"
seed = 3
duration_s = 240.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 3
radius_m = 300.0
[observing]
calibrator_scan_s = 60.0
target_scan_s = 60.0
)",
                                           "checksum.toml", test::testdata(""));
  Night night = simulate_night(scenario);
  ResultGroup group;
  group.stage = "demo_stage";
  group.datasets.push_back({"values", {3, 4}, std::vector<double>(12, 0.5), "m", {}});
  group.datasets.push_back({"codes", {2}, std::vector<std::int32_t>{1, 2}, "1", {}});
  night.results.push_back(group);
  return night;
}

struct StoredDataset {
  std::string name;
  bool chunked = false;
  bool has_checksum = false;
  hsize_t elements = 0;
  haddr_t first_chunk_address = HADDR_UNDEF;
  hsize_t first_chunk_bytes = 0;
};

herr_t collect(hid_t root, const char* name, const H5O_info_t* info, void* data) {
  if (info->type != H5O_TYPE_DATASET) return 0;
  StoredDataset stored;
  stored.name = std::string("/") + name;
  const hid_t dataset = H5Dopen2(root, name, H5P_DEFAULT);
  const hid_t dcpl = H5Dget_create_plist(dataset);
  const hid_t space = H5Dget_space(dataset);
  stored.elements = static_cast<hsize_t>(H5Sget_simple_extent_npoints(space));
  stored.chunked = H5Pget_layout(dcpl) == H5D_CHUNKED;
  for (int i = 0; i < H5Pget_nfilters(dcpl); ++i) {
    unsigned flags = 0;
    std::size_t count = 0;
    if (H5Pget_filter2(dcpl, static_cast<unsigned>(i), &flags, &count, nullptr, 0, nullptr,
                       nullptr) == H5Z_FILTER_FLETCHER32)
      stored.has_checksum = true;
  }
  if (stored.chunked) {
    std::vector<hsize_t> offset(static_cast<std::size_t>(H5Sget_simple_extent_ndims(space)));
    unsigned mask = 0;
    H5Dget_chunk_info(dataset, space, 0, offset.data(), &mask, &stored.first_chunk_address,
                      &stored.first_chunk_bytes);
  }
  H5Sclose(space);
  H5Pclose(dcpl);
  H5Dclose(dataset);
  static_cast<std::vector<StoredDataset>*>(data)->push_back(stored);
  return 0;
}

std::vector<StoredDataset> stored_datasets(const fs::path& file) {
  std::vector<StoredDataset> datasets;
  const hid_t handle = H5Fopen(file.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
  H5Ovisit2(handle, H5_INDEX_NAME, H5_ITER_INC, collect, &datasets, H5O_INFO_BASIC);
  H5Fclose(handle);
  return datasets;
}

class NightFileChecksum : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / ("wvr-checksum-" + std::to_string(::getpid()));
    fs::remove_all(dir_);
    fs::create_directories(dir_);
    good_ = dir_ / "night.h5";
    write_night(small_night(), good_);
  }
  void TearDown() override { fs::remove_all(dir_); }
  fs::path dir_, good_;
};

TEST_F(NightFileChecksum, EveryDatasetWithValuesCarriesAChecksum) {
  const std::vector<StoredDataset> datasets = stored_datasets(good_);
  ASSERT_GE(datasets.size(), 25u);
  std::size_t checked = 0;
  for (const StoredDataset& d : datasets) {
    if (d.elements == 0) continue;  // nothing stored, nothing to protect
    EXPECT_TRUE(d.chunked) << d.name;
    EXPECT_TRUE(d.has_checksum) << d.name;
    ++checked;
  }
  EXPECT_GE(checked, 20u);
}

TEST_F(NightFileChecksum, AFlippedByteInAnyDatasetIsRefusedWithTheDatasetNamed) {
  std::string bytes;
  {
    std::ifstream in(good_, std::ios::binary);
    bytes.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  }
  std::size_t flipped = 0;
  for (const StoredDataset& d : stored_datasets(good_)) {
    if (!d.chunked || d.first_chunk_address == HADDR_UNDEF || d.first_chunk_bytes == 0) continue;
    std::string damaged = bytes;
    damaged[d.first_chunk_address + d.first_chunk_bytes / 2] ^= 0x10;
    const fs::path broken = dir_ / "broken.h5";
    std::ofstream(broken, std::ios::binary | std::ios::trunc) << damaged;
    std::string message;
    try {
      read_night(broken);
    } catch (const InvalidInput& e) {
      message = e.what();
    }
    // The one dataset stored under two names (the shared time axis) may be named by either.
    const std::string base = d.name.substr(d.name.rfind('/'));
    EXPECT_NE(message.find(base), std::string::npos) << d.name << ": '" << message << "'";
    EXPECT_NE(message.find("broken.h5"), std::string::npos) << d.name << ": " << message;
    ++flipped;
  }
  EXPECT_GE(flipped, 20u);
}

}  // namespace
}  // namespace wvr
