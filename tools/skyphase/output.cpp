#include "output.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <iomanip>
#include <map>
#include <ostream>
#include <sstream>

namespace skyphase {

void add_format_option(CLI::App& command, Format& format) {
  const std::map<std::string, Format> names = {
      {"table", Format::kTable}, {"csv", Format::kCsv}, {"json", Format::kJson}};
  command.add_option("--format", format, "Output format: table, csv or json")
      ->transform(CLI::CheckedTransformer(names, CLI::ignore_case))
      ->default_str("table");
}

void Table::print_text(std::ostream& out) const {
  std::vector<std::size_t> width(columns_.size());
  for (std::size_t c = 0; c < columns_.size(); ++c) width[c] = columns_[c].size();
  for (const auto& row : rows_) {
    for (std::size_t c = 0; c < row.size() && c < width.size(); ++c) {
      width[c] = std::max(width[c], row[c].size());
    }
  }
  auto print_row = [&](const std::vector<std::string>& cells) {
    for (std::size_t c = 0; c < cells.size(); ++c) {
      out << (c == 0 ? "" : "  ") << std::setw(static_cast<int>(width[c])) << cells[c];
    }
    out << "\n";
  };
  print_row(columns_);
  for (const auto& row : rows_) print_row(row);
}

void Table::print_csv(std::ostream& out) const {
  auto print_row = [&](const std::vector<std::string>& cells) {
    for (std::size_t c = 0; c < cells.size(); ++c) out << (c == 0 ? "" : ",") << cells[c];
    out << "\n";
  };
  print_row(columns_);
  for (const auto& row : rows_) print_row(row);
}

std::string fixed(double value, int digits) {
  std::ostringstream s;
  s << std::fixed << std::setprecision(digits) << value;
  return s.str();
}

std::string exact(double value) {
  char buffer[64];
  const auto result = std::to_chars(buffer, buffer + sizeof(buffer), value);
  return std::string(buffer, result.ptr);
}

}  // namespace skyphase
