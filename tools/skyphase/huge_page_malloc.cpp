#include "huge_page_malloc.hpp"

#include <unistd.h>

#include <cstdlib>
#include <string_view>

namespace skyphase {

namespace {

constexpr std::string_view kTunable = "glibc.malloc.hugetlb";

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

}  // namespace

std::optional<std::string> tunables_with_huge_page_malloc(const char* current) {
  const std::string_view existing = current == nullptr ? std::string_view() : current;
  if (tunable_value(existing, kTunable)) return std::nullopt;
  std::string value(existing);
  if (!value.empty()) value += ':';
  value += std::string(kTunable) + "=1";
  return value;
}

bool huge_page_malloc_on() {
  const char* current = std::getenv("GLIBC_TUNABLES");
  if (current == nullptr) return false;
  const auto value = tunable_value(current, kTunable);
  return value && *value == "1";
}

void reexec_with_huge_page_malloc(char** argv) {
  const char* current = std::getenv("GLIBC_TUNABLES");
  const std::optional<std::string> wanted = tunables_with_huge_page_malloc(current);
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
