#include "malloc_tunables.hpp"

#include <unistd.h>

#include <array>
#include <cstdlib>
#include <string_view>
#include <utility>

namespace skyphase {

namespace {

constexpr std::string_view kHugePages = "glibc.malloc.hugetlb";
constexpr std::string_view kMmapMax = "glibc.malloc.mmap_max";
// (name, value) of every setting skyphase adds.
constexpr std::array<std::pair<std::string_view, std::string_view>, 3> kSettings = {{
    {kHugePages, "1"}, {kMmapMax, "0"}, {"glibc.malloc.trim_threshold", "17179869184"},  // 16 GiB
}};

// The value of `name` in a GLIBC_TUNABLES string (name=value entries separated by ':').
std::optional<std::string_view> tunable_value(std::string_view tunables, std::string_view name) {
  while (!tunables.empty()) {
    const std::size_t end = tunables.find(':');
    const std::string_view entry = tunables.substr(0, end);
    if (entry.size() > name.size() && entry.substr(0, name.size()) == name &&
        entry[name.size()] == '=')
      return entry.substr(name.size() + 1);
    if (end == std::string_view::npos) break;
    tunables.remove_prefix(end + 1);
  }
  return std::nullopt;
}

bool tunable_is(std::string_view name, std::string_view value) {
  const char* current = std::getenv("GLIBC_TUNABLES");
  if (current == nullptr) return false;
  const auto set = tunable_value(current, name);
  return set && *set == value;
}

}  // namespace

std::optional<std::string> tunables_for_large_nights(const char* current) {
  const std::string_view existing = current == nullptr ? std::string_view() : current;
  std::string value(existing);
  bool added = false;
  for (const auto& [name, setting] : kSettings) {
    if (tunable_value(existing, name)) continue;
    if (!value.empty()) value += ':';
    value += std::string(name) + "=" + std::string(setting);
    added = true;
  }
  if (!added) return std::nullopt;
  return value;
}

bool huge_page_malloc_on() { return tunable_is(kHugePages, "1"); }

bool freed_memory_kept() { return tunable_is(kMmapMax, "0"); }

void reexec_with_malloc_tunables(char** argv) {
  const char* current = std::getenv("GLIBC_TUNABLES");
  const std::optional<std::string> wanted = tunables_for_large_nights(current);
  if (!wanted) return;
  const std::optional<std::string> previous =
      current == nullptr ? std::nullopt : std::optional<std::string>(current);
  if (setenv("GLIBC_TUNABLES", wanted->c_str(), 1) != 0) return;
  execv("/proc/self/exe", argv);
  // No exec (no /proc, say): run on as started, with the environment as it was.
  if (previous) {
    setenv("GLIBC_TUNABLES", previous->c_str(), 1);
  } else {
    unsetenv("GLIBC_TUNABLES");
  }
}

}  // namespace skyphase
