#include "archive/atomic_output.hpp"

#include <unistd.h>

#include <algorithm>
#include <string>

#include "wvr/error.hpp"

namespace wvr::archive {

void check_output_path(const std::filesystem::path& output,
                       const std::filesystem::path& ms,
                       bool overwrite) {
  namespace fs = std::filesystem;
  std::error_code ec;
  if (fs::exists(output, ec) && fs::equivalent(output, ms, ec))
    throw InvalidInput("output " + output.string() +
                       " is the input MS; the input is never written");
  // An output inside the input's directory would be written into the input (and its copy
  // would hold itself).
  const fs::path input_dir = fs::weakly_canonical(ms, ec);
  const fs::path output_path = fs::weakly_canonical(fs::absolute(output), ec);
  const auto [input_end, output_it] =
      std::mismatch(input_dir.begin(), input_dir.end(), output_path.begin(), output_path.end());
  if (!input_dir.empty() && input_end == input_dir.end())
    throw InvalidInput("output " + output.string() + " is inside the input MS " + ms.string() +
                       "; the input is never written");
  if (fs::exists(output) && !overwrite)
    throw InvalidInput("output " + output.string() + " exists (overwrite_output not set)");
}

void write_then_rename(const std::filesystem::path& output,
                       const std::function<void(const std::filesystem::path&)>& write) {
  namespace fs = std::filesystem;
  // Absolute: with a relative output in the working directory casacore failed to open the
  // copy it had just made ("No such file or directory").
  const fs::path absolute = fs::absolute(output);
  const fs::path temporary = absolute.parent_path() / (".tmp-" + absolute.filename().string() +
                                                       "-" + std::to_string(::getpid()));
  std::error_code ec;
  fs::remove_all(temporary, ec);
  try {
    write(temporary);
    if (fs::exists(output)) fs::remove_all(output);
    fs::rename(temporary, output);
  } catch (...) {
    fs::remove_all(temporary, ec);
    throw;
  }
}

}  // namespace wvr::archive
