#pragma once
// Shared helpers for the C++ tests: reference-data lookup and CSV tables.

#include <filesystem>
#include <map>
#include <string>
#include <vector>

namespace wvr::test {

// Path of a file under testdata/.
std::filesystem::path testdata(const std::string& relative);

// A numeric CSV table with '#' comment lines and one header row. Non-numeric cells (e.g.
// profile names) are kept as text; numeric cells parse to double ("nan" allowed).
struct CsvTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;

  std::size_t column(const std::string& name) const;
  double number(std::size_t row, const std::string& name) const;
  const std::string& text(std::size_t row, const std::string& name) const;
  std::size_t size() const { return rows.size(); }
};

// Reads a CSV; `skip_rows_after_header` skips unit rows such as "(GHz),(hPa),...".
CsvTable read_csv(const std::filesystem::path& path, int skip_rows_after_header = 0);

}  // namespace wvr::test
