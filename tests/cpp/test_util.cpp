#include "test_util.hpp"

#include <fstream>
#include <sstream>
#include <stdexcept>

namespace wvr::test {

std::filesystem::path testdata(const std::string& relative) {
  return std::filesystem::path(WVR_TESTDATA_DIR) / relative;
}

std::size_t CsvTable::column(const std::string& name) const {
  for (std::size_t i = 0; i < header.size(); ++i) {
    if (header[i] == name) return i;
  }
  throw std::runtime_error("no column " + name);
}

double CsvTable::number(std::size_t row, const std::string& name) const {
  return std::stod(rows.at(row).at(column(name)));
}

const std::string& CsvTable::text(std::size_t row, const std::string& name) const {
  return rows.at(row).at(column(name));
}

CsvTable read_csv(const std::filesystem::path& path, int skip_rows_after_header) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path.string());
  CsvTable table;
  std::string line;
  int skipped = 0;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    std::vector<std::string> cells;
    std::stringstream stream(line);
    std::string cell;
    while (std::getline(stream, cell, ',')) cells.push_back(cell);
    if (table.header.empty()) {
      table.header = cells;
    } else if (skipped < skip_rows_after_header) {
      ++skipped;
    } else {
      table.rows.push_back(cells);
    }
  }
  return table;
}

}  // namespace wvr::test
