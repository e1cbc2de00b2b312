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

#include <filesystem>
#include <vector>

#include "wvr/night.hpp"

namespace wvr {

inline constexpr const char* kNightSchemaName = "libwvr-night";
// Version 2 added the optional /site record; version-1 files still read.
inline constexpr int kNightSchemaVersion = 2;
inline constexpr int kOldestReadableNightSchemaVersion = 1;

struct NightWriteOptions {
  // Replace an existing file at the output path (never allowed when it is the input).
  bool overwrite_output = false;
  // add_result_group: replace a result group of the same stage instead of failing.
  bool replace_existing_results = false;
  // gzip level (1-9, after byte shuffle) of the chunked datasets written; 0 stores them
  // uncompressed: about 20x faster to write, files 1.3-1.6x larger (measured on demo
  // nights with 0.1 K brightness noise).
  int compression_level = 4;
};

// Reads and validates a night file, including every result group. Throws InvalidInput
// naming the file and the dataset path on any problem: not HDF5, truncated, unknown
// schema or version, missing dataset, wrong shape, type or units, bad values.
Night read_night(const std::filesystem::path& path);

// Validates `night` and writes it (with its result groups) to a new file at `path`.
void write_night(const Night& night,
                 const std::filesystem::path& path,
                 const NightWriteOptions& options = {});

// Writes a copy of the night file `input` plus /results/<group.stage> to `output`.
// `input` is validated first and left untouched; `output` must be a different file.
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
