#include "core/config_text.hpp"

#include <algorithm>
#include <fstream>
#include <numeric>
#include <sstream>

#include "wvr/error.hpp"

namespace wvr::detail {
namespace {

std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> previous(b.size() + 1);
  std::vector<std::size_t> current(b.size() + 1);
  std::iota(previous.begin(), previous.end(), std::size_t{0});
  for (std::size_t i = 1; i <= a.size(); ++i) {
    current[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t substitution = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, substitution});
    }
    std::swap(previous, current);
  }
  return previous[b.size()];
}

}  // namespace

std::string read_text_file(const std::filesystem::path& path, const std::string& what) {
  std::error_code error;
  const std::filesystem::file_status status = std::filesystem::status(path, error);
  if (error || !std::filesystem::exists(status)) {
    throw InvalidInput(what + " " + path.string() + " cannot be opened (no such file)");
  }
  if (!std::filesystem::is_regular_file(status)) {
    throw InvalidInput(what + " " + path.string() + " is not a regular file");
  }
  const std::uintmax_t size_bytes = std::filesystem::file_size(path, error);
  if (!error && size_bytes > kMaxConfigBytes) {
    throw InvalidInput(what + " " + path.string() + " is " + std::to_string(size_bytes) +
                       " bytes, more than a configuration file can be (" +
                       std::to_string(kMaxConfigBytes) + ")");
  }
  std::ifstream in(path);
  if (!in) throw InvalidInput(what + " " + path.string() + " cannot be opened");
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

toml::table parse_toml(const std::string& text, const std::string& source_name) {
  try {
    return toml::parse(text, source_name);
  } catch (const toml::parse_error& error) {
    std::ostringstream msg;
    msg << source_name << ": not valid TOML at line " << error.source().begin.line << ": "
        << error.description();
    throw InvalidInput(msg.str());
  }
}

std::optional<std::string> nearest_key(std::string_view key,
                                       const std::vector<std::string>& known_keys) {
  // A key that the known one begins with is that key without its unit or qualifier suffix.
  for (const std::string& known : known_keys) {
    if (key.size() >= 3 && known.starts_with(key)) return known;
  }
  std::optional<std::string> best;
  std::size_t best_distance = 0;
  for (const std::string& known : known_keys) {
    const std::size_t distance = edit_distance(key, known);
    if (!best || distance < best_distance) {
      best = known;
      best_distance = distance;
    }
  }
  // Close enough to be a slip of the keyboard, not a different word.
  const std::size_t allowed = std::max<std::size_t>(3, key.size() / 2);
  if (best && best_distance <= allowed) return best;
  return std::nullopt;
}

StrictTable::StrictTable(const toml::table& table, std::string source, std::string prefix)
    : table_(table), source_(std::move(source)), prefix_(std::move(prefix)) {}

const toml::node* StrictTable::lookup(const char* key) {
  if (std::find(known_keys_.begin(), known_keys_.end(), key) == known_keys_.end()) {
    known_keys_.emplace_back(key);
  }
  return table_.get(key);
}

std::string StrictTable::where(std::string_view key) const {
  return source_ + ": " + prefix_ + std::string(key);
}

const toml::node* StrictTable::node(const char* key) { return lookup(key); }

std::optional<double> StrictTable::optional_number(const char* key) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return std::nullopt;
  if (auto value = found->value<double>()) return *value;
  throw InvalidInput(where(key) + " is not a number");
}

double StrictTable::number(const char* key, double fallback) {
  return optional_number(key).value_or(fallback);
}

double StrictTable::required_number(const char* key) {
  const std::optional<double> value = optional_number(key);
  if (!value) throw InvalidInput(source_ + ": missing " + prefix_ + key);
  return *value;
}

std::int64_t StrictTable::integer(const char* key,
                                  std::int64_t fallback,
                                  std::int64_t min_value,
                                  std::int64_t max_value) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return fallback;
  const toml::value<std::int64_t>* value = found->as_integer();
  if (value == nullptr) throw InvalidInput(where(key) + " is not an integer");
  const std::int64_t v = value->get();
  if (v < min_value || v > max_value) {
    throw InvalidInput(where(key) + " = " + std::to_string(v) + " is outside [" +
                       std::to_string(min_value) + ", " + std::to_string(max_value) + "]");
  }
  return v;
}

std::string StrictTable::text(const char* key, const std::string& fallback) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return fallback;
  if (auto value = found->value<std::string>()) return *value;
  throw InvalidInput(where(key) + " is not a string");
}

bool StrictTable::boolean(const char* key, bool fallback) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return fallback;
  if (auto value = found->value<bool>()) return *value;
  throw InvalidInput(where(key) + " is not true or false");
}

const toml::table& StrictTable::sub_table(const char* key) {
  static const toml::table kEmpty;
  const toml::node* found = lookup(key);
  if (found == nullptr) return kEmpty;
  if (const toml::table* table = found->as_table()) return *table;
  throw InvalidInput(source_ + ": [" + prefix_ + key + "] is not a table");
}

std::vector<const toml::table*> StrictTable::table_list(const char* key) {
  std::vector<const toml::table*> tables;
  const toml::node* found = lookup(key);
  if (found == nullptr) return tables;
  const toml::array* items = found->as_array();
  if (items == nullptr) {
    throw InvalidInput(where(key) + " must be a list of tables [[" + prefix_ + key + "]]");
  }
  for (std::size_t i = 0; i < items->size(); ++i) {
    const toml::table* table = items->get(i)->as_table();
    if (table == nullptr) {
      throw InvalidInput(where(key) + "[" + std::to_string(i) + "] is not a table");
    }
    tables.push_back(table);
  }
  return tables;
}

void StrictTable::reject_unknown_keys() const {
  for (const auto& [key, value] : table_) {
    const std::string_view name = key.str();
    if (std::find(known_keys_.begin(), known_keys_.end(), name) != known_keys_.end()) continue;
    std::ostringstream msg;
    msg << source_;
    if (key.source().begin.line > 0) msg << ":" << key.source().begin.line;
    msg << ": unknown key '" << prefix_ << name << "'";
    if (const std::optional<std::string> suggestion = nearest_key(name, known_keys_)) {
      msg << " (did you mean '" << prefix_ << *suggestion << "'?)";
    } else {
      std::vector<std::string> sorted = known_keys_;
      std::sort(sorted.begin(), sorted.end());
      msg << " (known:";
      for (const std::string& known : sorted) msg << " " << known;
      msg << ")";
    }
    throw InvalidInput(msg.str());
  }
}

}  // namespace wvr::detail
