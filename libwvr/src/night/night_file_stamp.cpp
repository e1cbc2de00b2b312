// A night file's identity on disk (wvr::NightFileStamp), from POSIX stat.

#include <sys/stat.h>

#include <cerrno>
#include <cstring>

#include "wvr/error.hpp"
#include "wvr/night_file.hpp"

namespace wvr {

NightFileStamp night_file_stamp(const std::filesystem::path& path) {
  struct stat status {};
  if (::stat(path.c_str(), &status) != 0) {
    throw InvalidInput(path.string() + ": cannot be looked at: " + std::strerror(errno));
  }
  NightFileStamp stamp;
  stamp.device = static_cast<std::uint64_t>(status.st_dev);
  stamp.inode = static_cast<std::uint64_t>(status.st_ino);
  stamp.size_bytes = static_cast<std::uint64_t>(status.st_size);
  stamp.modified_ns = static_cast<std::int64_t>(status.st_mtim.tv_sec) * 1000000000 +
                      static_cast<std::int64_t>(status.st_mtim.tv_nsec);
  return stamp;
}

}  // namespace wvr
