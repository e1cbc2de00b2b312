#pragma once
// Structure function points, and the temporal structure function of a regularly sampled
// series.

#include <cstddef>
#include <span>
#include <vector>

namespace wvr {

// An empirical structure function: D at each separation (or lag) and the number of pairs
// averaged. value_m2 is NaN where no pair was available.
struct StructureFunctionEstimate {
  std::vector<double> separation;  // m for spatial estimates, s for temporal ones
  std::vector<double> value_m2;
  std::vector<std::size_t> pair_count;
};

// Mean of (x[n + k] - x[n])^2 for a regularly sampled series, k = round(lag_s /
// sample_interval_s) >= 1 and shorter than the series (otherwise InvalidInput). Sample n of the
// series is series_m[n * stride], so one antenna's column of a row-major [time x antenna]
// array is (path.subspan(a), n_antennas). Pairs with a non-finite member are skipped.
StructureFunctionEstimate temporal_structure_function(std::span<const double> series_m,
                                                      double sample_interval_s,
                                                      std::span<const double> lag_s,
                                                      std::size_t stride = 1);

}  // namespace wvr
