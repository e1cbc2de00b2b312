#pragma once
// Reading configuration files: the whole text of a file and TOML parsing with errors that
// name the file and line (radiometer, site and scenario files share these).

#include <toml++/toml.h>

#include <filesystem>
#include <string>

namespace wvr::detail {

// The file's text; throws InvalidInput("<what> <path> cannot be opened").
std::string read_text_file(const std::filesystem::path& path, const std::string& what);

// Parses TOML; throws InvalidInput("<source>: not valid TOML at line N: ...").
toml::table parse_toml(const std::string& text, const std::string& source_name);

}  // namespace wvr::detail
