#pragma once
// Night files: one observing night in one HDF5 file (schema "libwvr-night", described in
// libwvr/FORMAT.md).
//
// Files are never modified in place. Writers build the new file under a temporary name in
// the destination directory and rename it into place, so readers see either the old file
// or the complete new one. The input of add_result_group is only ever opened read-only.
//
//   wvr::Night night = wvr::read_night("night.h5");
//   wvr::ResultGroup retrieval{"retrieval", {{"pwv_mm", {A, T}, pwv, "mm", {}}}, {}};
//   wvr::add_result_group("night.h5", "night-retrieved.h5", retrieval);

#include <cstdint>
#include <filesystem>
#include <optional>
#include <vector>

#include "wvr/night.hpp"

namespace wvr {

inline constexpr const char* kNightSchemaName = "libwvr-night";
// Version 2 added the optional /site record; version-1 files still read.
inline constexpr int kNightSchemaVersion = 2;
inline constexpr int kOldestReadableNightSchemaVersion = 1;

// A night file's identity on disk when read_night(path, stamp) read and validated it: its
// device, inode, size and modification and status-change times. Only the library makes one
// (read_night below), so a stamp a caller holds stands for a file that was validated. The times
// come at the file system's timer granularity; the status-change time cannot be set back by
// programs (touch -r, cp -p).
class NightFileStamp;
namespace detail {
// The current stamp of the file at `path` (the library's own; InvalidInput naming the path when
// it cannot be looked at).
NightFileStamp current_stamp(const std::filesystem::path& path);
}  // namespace detail

class NightFileStamp {
 public:
  NightFileStamp() = default;  // stands for no file: equals no file's stamp
  bool operator==(const NightFileStamp&) const = default;

 private:
  friend NightFileStamp detail::current_stamp(const std::filesystem::path& path);
  bool valid_ = false;
  std::uint64_t device_ = 0, inode_ = 0, size_bytes_ = 0;
  std::int64_t modified_ns_ = 0, changed_ns_ = 0;
};

struct NightWriteOptions {
  // Replace an existing file at the output path (never allowed when it is the input).
  bool overwrite_output = false;
  // add_result_group: replace a result group of the same stage instead of failing.
  bool replace_existing_results = false;
  // gzip level (1-9, after byte shuffle) of the chunked datasets written; 0 stores them
  // uncompressed: 3-4x faster to write, files about 2x larger (measured on a 16-antenna,
  // 2-hour demo night). Level 1 against 4 on a 64-antenna, 8-hour night with every baseline:
  // 302.0 against 301.3 MB, written in 3.2-3.3 s against 3.7-4.0 s (2 threads).
  int compression_level = 1;
  // Threads compressing the chunks of each dataset (0 = all cores); the file's bytes do not
  // depend on it.
  int threads = 0;
  // add_result_groups: the stamp the input had when the caller read (and so validated) it and
  // computed the results from it. The input is then not read and validated again (for a large
  // night that second read is a fifth of the write and a second copy of the night in memory);
  // an input that changed since is refused: the results would belong to another file.
  std::optional<NightFileStamp> input_read_with = std::nullopt;
};

struct NightReadOptions {
  // Threads inflating and checking the chunks of each dataset (0 = all cores); the night read
  // does not depend on it.
  int threads = 0;
};

// Reads and validates a night file, including every result group. Throws InvalidInput
// naming the file and the dataset path on any problem: not HDF5, truncated, unknown
// schema or version, missing dataset, wrong shape, type or units, bad values.
Night read_night(const std::filesystem::path& path, const NightReadOptions& options = {});
// Same, and gives the file's stamp as it was read (InvalidInput when the file changed while
// it was being read).
Night read_night(const std::filesystem::path& path,
                 NightFileStamp& stamp,
                 const NightReadOptions& options = {});

// Validates `night` and writes it (with its result groups) to a new file at `path`.
void write_night(const Night& night,
                 const std::filesystem::path& path,
                 const NightWriteOptions& options = {});

// Writes a copy of the night file `input` plus /results/<group.stage> to `output`.
// `input` is validated first (not again when options.input_read_with is its current stamp)
// and left untouched; `output` must be a different file.
void add_result_group(const std::filesystem::path& input,
                      const std::filesystem::path& output,
                      const ResultGroup& group,
                      const NightWriteOptions& options = {});
// Same, adding several groups in one copy (in order).
void add_result_groups(const std::filesystem::path& input,
                       const std::filesystem::path& output,
                       const std::vector<ResultGroup>& groups,
                       const NightWriteOptions& options = {});

}  // namespace wvr
