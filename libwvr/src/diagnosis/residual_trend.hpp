#pragma once
// How far each antenna's phase residual after correction stands above the array's, allowing
// for baseline length (what correction leaves, dry air mostly, grows with length).

#include <cstddef>
#include <span>
#include <vector>

namespace wvr::detail {

struct BaselineResidual {
  std::size_t a = 0, b = 0;
  double length_m = 0.0;
  double rms = 0.0;  // residual phase rms after correction (any unit)
};

// For antenna a: the median over its baselines of rms / trend(length), where the trend
// rms = c length^slope (slope in [0, 1]: a structure function rises no faster than d^2) is
// fitted in log-log to the baselines NOT containing a (a faulty antenna cannot pull its own
// reference), with baselines above outlier_ratio x a first fit left out of a second. NaN for
// antennas without baselines or when fewer than one other baseline is usable.
std::vector<double> residual_excess(std::span<const BaselineResidual> baselines,
                                    std::size_t antennas,
                                    double outlier_ratio);

}  // namespace wvr::detail
