#pragma once
#include <array>

namespace wvr::detail {

// One line of ITU-R P.676-13 Annex 1 Table 1 (a1..a6) or Table 2 (b1..b6).
struct P676Line {
  double f0_ghz;
  double c1, c2, c3, c4, c5, c6;
};

extern const std::array<P676Line, 44> kP676OxygenLines;
extern const std::array<P676Line, 35> kP676WaterLines;

}  // namespace wvr::detail
