#pragma once
#include <array>

namespace wvr::detail {

// One water-vapour line of the Rosenkranz (2017) model, in the units of the published table
// (testdata/reference/rosenkranz-2017/h2o_lines.csv).
struct Rosenkranz2017Line {
  double f0_ghz;
  double s296_hz_cm2;          // intensity at 296 K
  double b;                    // temperature exponent of the intensity
  double w0_air_mhz_per_hpa;   // broadening by dry air at 296 K
  double x_air;                // temperature exponent of the air width
  double shift_ratio;          // pressure shift as a fraction of the air width
  double w0_self_mhz_per_hpa;  // broadening by vapour at 296 K
  double x_self;               // temperature exponent of the self width
};

extern const std::array<Rosenkranz2017Line, 15> kRosenkranz2017Lines;

}  // namespace wvr::detail
