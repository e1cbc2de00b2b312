// The night writer compresses chunks itself (on several threads) and stores them with
// H5Dwrite_chunk. Reference: HDF5 1.10's own filter pipeline. Every stored chunk of a written
// night must equal, byte for byte and in its filter mask, the chunk HDF5 makes when the same
// values are written through H5Dwrite into a dataset with the same creation properties.
#include "night/chunk_filters.hpp"

#include <gtest/gtest.h>
#include <hdf5.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <thread>
#include <vector>

#include "night/edge_chunk_night.hpp"
#include "test_util.hpp"
#include "wvr/wvr.hpp"

namespace wvr {
namespace {

namespace fs = std::filesystem;

struct Comparison {
  std::size_t datasets = 0;     // compressed datasets compared
  std::size_t chunks = 0;       // chunks compared
  std::size_t multi_chunk = 0;  // datasets of more than one chunk
  std::vector<std::string> differing;
};

hid_t scratch_file() {
  const hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
  H5Pset_fapl_core(fapl, 1 << 20, false);
  const hid_t file = H5Fcreate("chunk-reference.h5", H5F_ACC_TRUNC, H5P_DEFAULT, fapl);
  H5Pclose(fapl);
  return file;
}

std::vector<std::uint8_t> chunk_bytes(hid_t dataset,
                                      const std::vector<hsize_t>& offset,
                                      std::uint32_t* mask) {
  hsize_t size = 0;
  if (H5Dget_chunk_storage_size(dataset, offset.data(), &size) < 0) return {};
  std::vector<std::uint8_t> bytes(size);
  if (H5Dread_chunk(dataset, H5P_DEFAULT, offset.data(), mask, bytes.data()) < 0) return {};
  return bytes;
}

void compare_dataset(hid_t file, const std::string& name, hid_t scratch, Comparison& out) {
  const hid_t dataset = H5Dopen2(file, name.c_str(), H5P_DEFAULT);
  const hid_t dcpl = H5Dget_create_plist(dataset);
  bool deflated = false;
  for (int f = 0; f < H5Pget_nfilters(dcpl); ++f) {
    unsigned flags = 0;
    std::size_t values = 0;
    deflated = deflated || H5Pget_filter2(dcpl, static_cast<unsigned>(f), &flags, &values, nullptr,
                                          0, nullptr, nullptr) == H5Z_FILTER_DEFLATE;
  }
  if (H5Pget_layout(dcpl) == H5D_CHUNKED && deflated) {
    const hid_t space = H5Dget_space(dataset);
    const int rank = H5Sget_simple_extent_ndims(space);
    std::vector<hsize_t> shape(static_cast<std::size_t>(rank)), chunk(shape.size());
    H5Sget_simple_extent_dims(space, shape.data(), nullptr);
    H5Pget_chunk(dcpl, rank, chunk.data());
    const hid_t type = H5Dget_type(dataset);
    hsize_t elements = 1;
    for (hsize_t n : shape) elements *= n;
    std::vector<std::uint8_t> values(elements * H5Tget_size(type));
    H5Dread(dataset, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data());
    // The same values through HDF5's own filters.
    const std::string copy_name = "copy" + std::to_string(out.datasets);
    const hid_t copy =
        H5Dcreate2(scratch, copy_name.c_str(), type, space, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    H5Dwrite(copy, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, values.data());
    std::vector<hsize_t> grid(shape.size());
    std::size_t count = 1;
    for (std::size_t d = 0; d < shape.size(); ++d) {
      grid[d] = (shape[d] + chunk[d] - 1) / chunk[d];
      count *= grid[d];
    }
    if (count > 1) ++out.multi_chunk;
    for (std::size_t c = 0; c < count; ++c) {
      std::vector<hsize_t> offset(shape.size());
      std::size_t rest = c;
      for (std::size_t d = shape.size(); d-- > 0;) {
        offset[d] = (rest % grid[d]) * chunk[d];
        rest /= grid[d];
      }
      std::uint32_t ours_mask = 99, theirs_mask = 99;
      const std::vector<std::uint8_t> ours = chunk_bytes(dataset, offset, &ours_mask);
      const std::vector<std::uint8_t> theirs = chunk_bytes(copy, offset, &theirs_mask);
      if (ours.empty() || ours != theirs || ours_mask != theirs_mask) {
        out.differing.push_back(name + " chunk " + std::to_string(c));
      }
      ++out.chunks;
    }
    ++out.datasets;
    H5Dclose(copy);
    H5Tclose(type);
    H5Sclose(space);
  }
  H5Pclose(dcpl);
  H5Dclose(dataset);
}

herr_t list_dataset(hid_t, const char* name, const H5O_info_t* info, void* data) {
  if (info->type == H5O_TYPE_DATASET)
    static_cast<std::vector<std::string>*>(data)->push_back(std::string("/") + name);
  return 0;
}

Comparison compare_with_hdf5(const fs::path& path) {
  Comparison out;
  const hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
  std::vector<std::string> names;
  H5Ovisit(file, H5_INDEX_NAME, H5_ITER_INC, list_dataset, &names);
  const hid_t scratch = scratch_file();
  for (const std::string& name : names) compare_dataset(file, name, scratch, out);
  H5Fclose(scratch);
  H5Fclose(file);
  return out;
}

void expect_datasets_equal(const ResultGroup& written, const ResultGroup& read) {
  ASSERT_EQ(written.datasets.size(), read.datasets.size());
  for (std::size_t i = 0; i < written.datasets.size(); ++i) {
    EXPECT_EQ(written.datasets[i].name, read.datasets[i].name);
    EXPECT_EQ(written.datasets[i].shape, read.datasets[i].shape);
    EXPECT_TRUE(written.datasets[i].values == read.datasets[i].values) << written.datasets[i].name;
  }
}

std::vector<char> file_bytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

class NightFileChunks : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / ("wvr-chunks-" + std::to_string(::getpid()));
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }
  fs::path dir_;
};

TEST_F(NightFileChunks, StoredChunksEqualHdf5sOwnFilters) {
  const fs::path path = dir_ / "night.h5";
  NightWriteOptions options;
  options.threads = 2;
  write_night(edge_chunk_night(), path, options);
  const Comparison c = compare_with_hdf5(path);
  // Brightness, validity, pointing, truth: several multi-chunk datasets with edge chunks.
  EXPECT_GE(c.multi_chunk, 5u);
  EXPECT_GE(c.chunks, 30u);
  EXPECT_TRUE(c.differing.empty()) << c.differing.size() << " of " << c.chunks
                                   << " chunks differ, first " << c.differing.front();
  // And the file reads back as the night it was written from.
  const Night back = read_night(path);
  EXPECT_EQ(back.radiometer.brightness_k, edge_chunk_night().radiometer.brightness_k);
}

TEST_F(NightFileChunks, ResultGroupsOfEveryShapeAndTypeEqualHdf5sOwnFilters) {
  // Edges on the first, middle and last axes, rank 1 to 3, every element type a result group
  // holds, one chunk equal to its dataset, added to a copy of a night.
  const Night night = edge_chunk_night();
  const fs::path input = dir_ / "night.h5";
  write_night(night, input);
  ResultGroup group;
  group.stage = "shapes";
  const auto doubles = [](std::size_t n) {
    std::vector<double> v(n);
    for (std::size_t i = 0; i < n; ++i) v[i] = std::sin(0.37 * static_cast<double>(i)) * 1e3;
    return v;
  };
  const auto ints = [](std::size_t n) {
    std::vector<std::int32_t> v(n);
    for (std::size_t i = 0; i < n; ++i) v[i] = static_cast<std::int32_t>((i * 7919) % 100003);
    return v;
  };
  group.datasets.push_back({"rank1", {100003}, doubles(100003), "m", {}});
  group.datasets.push_back({"rank2", {5, 8000}, doubles(5 * 8000), "m", {}});
  group.datasets.push_back({"rank3_first", {5, 7, 1001}, doubles(5 * 7 * 1001), "m", {}});
  group.datasets.push_back({"rank3_middle", {3, 5, 9000}, doubles(3 * 5 * 9000), "m", {}});
  group.datasets.push_back({"codes", {7, 5001}, ints(7 * 5001), "1", {}});
  const std::size_t written_before = detail::h5::filtered_chunks_written;
  NightWriteOptions options;
  options.threads = 2;
  add_result_groups(input, dir_ / "out.h5", {group}, options);
  EXPECT_GE(detail::h5::filtered_chunks_written, written_before + 10);  // this path was taken
  const Comparison c = compare_with_hdf5(dir_ / "out.h5");
  EXPECT_GE(c.multi_chunk, 9u);
  EXPECT_TRUE(c.differing.empty()) << c.differing.size() << " of " << c.chunks
                                   << " chunks differ, first " << c.differing.front();
  expect_datasets_equal(group, read_night(dir_ / "out.h5").results.back());
}

TEST_F(NightFileChunks, FileBytesDoNotDependOnThreads) {
  const Night night = edge_chunk_night();
  NightWriteOptions options;
  options.threads = 1;
  write_night(night, dir_ / "one.h5", options);
  // The second write starts in a later second of the clock: a time HDF5 stored in an object
  // header would differ (it counts seconds).
  std::this_thread::sleep_for(std::chrono::milliseconds(1100));
  options.threads = 3;
  write_night(night, dir_ / "three.h5", options);
  EXPECT_EQ(file_bytes(dir_ / "one.h5"), file_bytes(dir_ / "three.h5"));
  options.threads = -1;
  EXPECT_THROW(write_night(night, dir_ / "bad.h5", options), InvalidInput);
}

TEST(ChunkFilters, Fletcher32OfOddLengthsAndLongRuns) {
  // HDF5 itself is the reference in the tests above; here values derived by hand from the
  // algorithm check the folding: 360-word blocks must not overflow (all-0xff bytes are the
  // largest words; sums of 0xffff words fold to 0xffff), and an odd last byte is a high byte.
  const std::vector<std::uint8_t> ones(100000, 0xff);
  EXPECT_EQ(detail::h5::hdf5_fletcher32(ones.data(), ones.size()), 0xffffffffu);
  const std::uint8_t odd[3] = {0x01, 0x02, 0x03};
  // sum1 = 0x0102 + 0x0300 = 0x0402, sum2 = 0x0102 + 0x0402 = 0x0504.
  EXPECT_EQ(detail::h5::hdf5_fletcher32(odd, 3), 0x05040402u);
}

}  // namespace
}  // namespace wvr
