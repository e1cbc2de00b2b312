#include "core/config_text.hpp"

#include <fstream>
#include <sstream>

#include "wvr/error.hpp"

namespace wvr::detail {

std::string read_text_file(const std::filesystem::path& path, const std::string& what) {
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

}  // namespace wvr::detail
