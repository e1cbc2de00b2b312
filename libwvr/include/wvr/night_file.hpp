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

// A night file's identity on disk: equal stamps taken at two moments mean, as far as the
// file system can tell, the same unchanged file (the modification time has nanoseconds).
struct NightFileStamp {
  std::uint64_t device = 0, inode = 0, size_bytes = 0;
  std::int64_t modified_ns = 0;
  bool operator==(const NightFileStamp&) const = default;
};
// Throws InvalidInput naming the path when it cannot be looked at.
NightFileStamp night_file_stamp(const std::filesystem::path& path);

struct NightWriteOptions {
  // Replace an existing file at the output path (never allowed when it is the input).
  bool overwrite_output = false;
  // add_result_group: replace a result group of the same stage instead of failing.
  bool replace_existing_results = false;
  // gzip level (1-9, after byte shuffle) of the chunked datasets written; 0 stores them
  // uncompressed: about 20x faster to write, files 1.3-1.6x larger (measured on demo
  // nights with 0.1 K brightness noise).
  int compression_level = 4;
  // Threads compressing the chunks of each dataset (0 = all cores); the file's bytes do not
  // depend on it.
  int threads = 0;
  // add_result_groups: the stamp the input had when it was read (and so validated) by the
  // caller. While the input's stamp is unchanged it is not read and validated again (for a
  // large night that second read is a fifth of the write); a changed input is.
  std::optional<NightFileStamp> input_read_with;
};

// Reads and validates a night file, including every result group. Throws InvalidInput
// naming the file and the dataset path on any problem: not HDF5, truncated, unknown
// schema or version, missing dataset, wrong shape, type or units, bad values.
Night read_night(const std::filesystem::path& path);
// Same, and gives the file's stamp as it was read (InvalidInput when the file changed while
// it was being read).
Night read_night(const std::filesystem::path& path, NightFileStamp& stamp);

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
