#pragma once
// Output helpers shared by skyphase subcommands: a column table printed as aligned text or
// CSV, and the --format option.

#include <CLI/CLI.hpp>
#include <iosfwd>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace skyphase {

enum class Format { kTable, kCsv, kJson };

// Adds "--format table|csv|json" (default table) to a subcommand.
void add_format_option(CLI::App& command, Format& format);

// Rows of cells under named columns. As text: each column as wide as its widest cell, columns
// of numbers right-aligned, others left-aligned, the last column unpadded.
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
// "value +/- sigma" with the decimals that two significant digits of sigma need (4 decimals
// without a usable sigma).
std::string with_uncertainty(double value, double sigma);
// Shortest text that reads back to the same double.
std::string exact(double value);

// Prints a JSON document on stdout. Names read from files need not be UTF-8: invalid bytes
// are printed as U+FFFD instead of failing the whole command after its work is done.
void print_json(const nlohmann::ordered_json& document);

}  // namespace skyphase
