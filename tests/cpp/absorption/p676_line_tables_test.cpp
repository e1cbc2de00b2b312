// The line tables built into the absorption model equal ITU-R P.676-13 Annex 1, Tables 1 and 2,
// as given in testdata/reference/itu-r-p676-13/ (ITU-Rpy commit 6d7f35c3; provenance in the
// README of that folder).
#include <gtest/gtest.h>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "absorption/p676_lines.hpp"
#include "test_util.hpp"

namespace wvr {
namespace {

std::vector<std::vector<double>> read_line_table(const std::string& file) {
  std::ifstream in(test::testdata("reference/itu-r-p676-13/" + file));
  EXPECT_TRUE(in) << file;
  std::vector<std::vector<double>> rows;
  std::string line;
  std::getline(in, line);  // header: f0, a1..a6 or f0, b1..b6
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::stringstream cells(line);
    std::string cell;
    std::vector<double> row;
    while (std::getline(cells, cell, ',')) row.push_back(std::stod(cell));
    rows.push_back(row);
  }
  return rows;
}

template <std::size_t N>
void expect_same_lines(const std::array<detail::P676Line, N>& compiled, const std::string& file) {
  const auto rows = read_line_table(file);
  ASSERT_EQ(rows.size(), N) << file;
  for (std::size_t i = 0; i < N; ++i) {
    ASSERT_EQ(rows[i].size(), 7u) << file << " row " << i;
    const detail::P676Line& l = compiled[i];
    const double values[7] = {l.f0_ghz, l.c1, l.c2, l.c3, l.c4, l.c5, l.c6};
    // The tables print six decimals: equal to the last printed digit.
    for (std::size_t c = 0; c < 7; ++c)
      EXPECT_NEAR(values[c], rows[i][c], 5e-7) << file << " line " << i << " column " << c;
  }
}

TEST(P676LineTables, OxygenLinesEqualTable1) {
  expect_same_lines(detail::kP676OxygenLines, "v13_lines_oxygen.txt");
}

TEST(P676LineTables, WaterVapourLinesEqualTable2) {
  expect_same_lines(detail::kP676WaterLines, "v13_lines_water_vapour.txt");
}

}  // namespace
}  // namespace wvr
