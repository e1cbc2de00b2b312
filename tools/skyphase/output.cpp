#include "output.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <iomanip>
#include <iostream>
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

namespace {

// A cell that reads fully as a number (or is empty): such columns are right-aligned.
bool is_number(const std::string& cell) {
  if (cell.empty() || cell == "nan" || cell == "n/a") return true;
  char* end = nullptr;
  std::strtod(cell.c_str(), &end);
  return end == cell.c_str() + cell.size();
}

}  // namespace

void Table::print_text(std::ostream& out) const {
  // Each column as wide as its widest cell; numbers right-aligned, text left-aligned; the
  // last column is not padded, so a long text column costs no trailing blanks.
  std::vector<std::size_t> width(columns_.size());
  std::vector<bool> numeric(columns_.size(), true);
  for (std::size_t c = 0; c < columns_.size(); ++c) width[c] = columns_[c].size();
  for (const auto& row : rows_) {
    for (std::size_t c = 0; c < row.size() && c < width.size(); ++c) {
      width[c] = std::max(width[c], row[c].size());
      numeric[c] = numeric[c] && is_number(row[c]);
    }
  }
  auto print_row = [&](const std::vector<std::string>& cells) {
    std::string line;
    for (std::size_t c = 0; c < cells.size(); ++c) {
      const std::size_t w = c < width.size() ? width[c] : cells[c].size();
      const std::string pad(w > cells[c].size() ? w - cells[c].size() : 0, ' ');
      if (c > 0) line += "  ";
      const bool last = c + 1 == cells.size();
      if (c < numeric.size() && numeric[c]) {
        line += pad + cells[c];
      } else {
        line += cells[c] + (last ? "" : pad);
      }
    }
    out << line << "\n";
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

std::string with_uncertainty(double value, double sigma) {
  if (!std::isfinite(value)) return "n/a";
  if (!(std::isfinite(sigma) && sigma > 0.0)) return fixed(value, 4);
  // Two significant digits of the uncertainty set the decimals of both.
  const int digits = std::clamp(1 - static_cast<int>(std::floor(std::log10(sigma))), 0, 12);
  return fixed(value, digits) + " +/- " + fixed(sigma, digits);
}

std::string exact(double value) {
  char buffer[64];
  const auto result = std::to_chars(buffer, buffer + sizeof(buffer), value);
  return std::string(buffer, result.ptr);
}

void print_json(const nlohmann::ordered_json& document) {
  std::cout << document.dump(2, ' ', false, nlohmann::ordered_json::error_handler_t::replace)
            << "\n";
}

}  // namespace skyphase
