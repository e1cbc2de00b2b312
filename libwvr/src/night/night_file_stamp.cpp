// A night file's identity on disk (wvr::NightFileStamp), from POSIX stat.

#include <sys/stat.h>

#include <cerrno>
#include <cstring>

#include "wvr/error.hpp"
#include "wvr/night_file.hpp"

namespace wvr {

namespace detail {

NightFileStamp current_stamp(const std::filesystem::path& path) {
  struct stat status {};
  if (::stat(path.c_str(), &status) != 0) {
    throw InvalidInput(path.string() + ": cannot be looked at: " + std::strerror(errno));
  }
  const auto nanoseconds = [](const timespec& t) {
    return static_cast<std::int64_t>(t.tv_sec) * 1000000000 + static_cast<std::int64_t>(t.tv_nsec);
  };
  NightFileStamp stamp;
  stamp.valid_ = true;
  stamp.device_ = static_cast<std::uint64_t>(status.st_dev);
  stamp.inode_ = static_cast<std::uint64_t>(status.st_ino);
  stamp.size_bytes_ = static_cast<std::uint64_t>(status.st_size);
  stamp.modified_ns_ = nanoseconds(status.st_mtim);
  stamp.changed_ns_ = nanoseconds(status.st_ctim);
  return stamp;
}

}  // namespace detail

}  // namespace wvr
