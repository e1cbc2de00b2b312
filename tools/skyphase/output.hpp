#pragma once
// Output helpers shared by skyphase subcommands: a column table printed as aligned text or
// CSV, and the --format option.

#include <CLI/CLI.hpp>
#include <iosfwd>
#include <string>
#include <vector>

namespace skyphase {

enum class Format { kTable, kCsv, kJson };

// Adds "--format table|csv|json" (default table) to a subcommand.
void add_format_option(CLI::App& command, Format& format);

// Rows of numbers under named columns; text columns are allowed through `text_columns`.
class Table {
 public:
  explicit Table(std::vector<std::string> columns) : columns_(std::move(columns)) {}
  void add_row(std::vector<std::string> cells) { rows_.push_back(std::move(cells)); }
  void print_text(std::ostream& out) const;
  void print_csv(std::ostream& out) const;

 private:
  std::vector<std::string> columns_;
  std::vector<std::vector<std::string>> rows_;
};

// Fixed-point text with `digits` decimals.
std::string fixed(double value, int digits);
// Shortest text that reads back to the same double.
std::string exact(double value);

}  // namespace skyphase
