#pragma once
// Reading configuration files: the whole text of a file, TOML parsing with errors that name the
// file and line, and a strict table reader (radiometer, site, thresholds and scenario files share
// these). Strict means a key nobody asked for is an error naming the file, line and key, with
// the nearest known key suggested: a misspelt key must not silently leave a default in place.

#include <toml++/toml.h>

#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace wvr::detail {

// The file's text; throws InvalidInput("<what> <path> cannot be opened") and refuses anything
// but a regular file of at most kMaxConfigBytes (a device such as /dev/zero never ends).
std::string read_text_file(const std::filesystem::path& path, const std::string& what);
inline constexpr std::uintmax_t kMaxConfigBytes = 16u << 20;

// Parses TOML; throws InvalidInput("<source>: not valid TOML at line N: ...").
toml::table parse_toml(const std::string& text, const std::string& source_name);

// The known key closest to `key` by edit distance, when close enough to be a likely misspelling.
std::optional<std::string> nearest_key(std::string_view key,
                                       const std::vector<std::string>& known_keys);

// Reads the keys of one TOML table and remembers every key it was asked for, present or not;
// reject_unknown_keys() then refuses any other key. `prefix` names the table in messages
// ("array.", "channels[2].").
class StrictTable {
 public:
  StrictTable(const toml::table& table, std::string source, std::string prefix);

  std::optional<double> optional_number(const char* key);
  double number(const char* key, double fallback);
  double required_number(const char* key);
  // An integer within [min_value, max_value]; anything else names the key and the value.
  std::int64_t integer(const char* key,
                       std::int64_t fallback,
                       std::int64_t min_value,
                       std::int64_t max_value);
  std::string text(const char* key, const std::string& fallback);
  bool boolean(const char* key, bool fallback);
  // The node under `key` (nullptr when absent), marked as known.
  const toml::node* node(const char* key);
  // The sub-table under `key` (an empty table when absent); throws when it is not a table.
  const toml::table& sub_table(const char* key);
  // The list of tables under `key` ([[key]]); empty when absent.
  std::vector<const toml::table*> table_list(const char* key);

  // Throws InvalidInput("<source>:<line>: unknown key '<prefix><key>' (did you mean '...'?)").
  void reject_unknown_keys() const;

  // "<source>: <prefix><key>", for messages about a value.
  std::string where(std::string_view key) const;
  const std::string& source() const { return source_; }

 private:
  const toml::node* lookup(const char* key);

  const toml::table& table_;
  std::string source_;
  std::string prefix_;
  std::vector<std::string> known_keys_;
};

}  // namespace wvr::detail
