#pragma once
// Table directories written beside their final path and renamed into place when complete, so
// that the output path never holds a partial table and the input is never the output.

#include <filesystem>
#include <functional>

namespace wvr::archive {

// Throws InvalidInput when `output` is the input `ms`, or exists and overwrite is not set.
void check_output_path(const std::filesystem::path& output,
                       const std::filesystem::path& ms,
                       bool overwrite);

// Calls write(temporary) with a fresh temporary path in output's directory, then replaces
// `output` by it. On any exception the temporary is removed and the exception passes on;
// `output` is then untouched.
void write_then_rename(const std::filesystem::path& output,
                       const std::function<void(const std::filesystem::path&)>& write);

}  // namespace wvr::archive
