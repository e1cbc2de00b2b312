// Empirical structure functions of screens and time series (wvr/phase_screen.hpp).

#include <cmath>
#include <limits>
#include <string>

#include "wvr/error.hpp"
#include "wvr/phase_screen.hpp"

namespace wvr {
namespace {

std::string indexed(const char* field, std::size_t index) {
  return std::string(field) + "[" + std::to_string(index) + "]";
}

// Whole number of steps for a separation or lag, checked against the available length.
std::size_t steps_for(const char* field,
                      std::size_t index,
                      double value,
                      double step,
                      std::size_t length,
                      const char* unit) {
  require_finite(indexed(field, index), value);
  const double steps = std::round(value / step);
  if (!(steps >= 1.0) || !(steps < static_cast<double>(length))) {
    throw InvalidInput(describe_value(indexed(field, index), value) + " " + unit + " rounds to " +
                       describe_value("steps", steps) + " of " + describe_value("step", step) +
                       " " + unit + "; it must be >= 1 and < " + std::to_string(length));
  }
  return static_cast<std::size_t>(steps);
}

double mean_or_nan(double sum, std::size_t count) {
  return count > 0 ? sum / static_cast<double>(count) : std::numeric_limits<double>::quiet_NaN();
}

}  // namespace

StructureFunctionEstimate screen_structure_function(const PhaseScreen& screen,
                                                    std::span<const double> separation_m,
                                                    ScreenAxis axis) {
  const ScreenGrid& grid = screen.grid();
  const std::size_t nx = grid.points_along;
  const std::size_t ny = grid.points_across;
  const std::span<const float> values = screen.grid_values();
  const bool along = axis == ScreenAxis::kAlongWind;
  StructureFunctionEstimate estimate;
  for (std::size_t s = 0; s < separation_m.size(); ++s) {
    const std::size_t k =
        steps_for("separation_m", s, separation_m[s], grid.spacing_m, along ? nx : ny, "m");
    double sum = 0.0;
    std::size_t count = 0;
    if (along) {
      for (std::size_t j = 0; j < ny; ++j) {
        const float* row = values.data() + j * nx;
        for (std::size_t i = 0; i + k < nx; ++i) {
          const double diff = static_cast<double>(row[i + k]) - row[i];
          sum += diff * diff;
        }
      }
      count = (nx - k) * ny;
    } else {
      for (std::size_t j = 0; j + k < ny; ++j) {
        const float* row = values.data() + j * nx;
        const float* other = row + k * nx;
        for (std::size_t i = 0; i < nx; ++i) {
          const double diff = static_cast<double>(other[i]) - row[i];
          sum += diff * diff;
        }
      }
      count = (ny - k) * nx;
    }
    estimate.separation.push_back(static_cast<double>(k) * grid.spacing_m);
    estimate.value_m2.push_back(mean_or_nan(sum, count));
    estimate.pair_count.push_back(count);
  }
  return estimate;
}

StructureFunctionEstimate temporal_structure_function(std::span<const double> series_m,
                                                      double sample_interval_s,
                                                      std::span<const double> lag_s,
                                                      std::size_t stride) {
  if (stride == 0) throw InvalidInput("stride = 0 must be >= 1");
  require_finite("sample_interval_s", sample_interval_s);
  if (!(sample_interval_s > 0.0)) {
    throw InvalidInput(describe_value("sample_interval_s", sample_interval_s) + " must be > 0 s");
  }
  const std::size_t n = series_m.empty() ? 0 : (series_m.size() - 1) / stride + 1;
  StructureFunctionEstimate estimate;
  for (std::size_t l = 0; l < lag_s.size(); ++l) {
    const std::size_t k = steps_for("lag_s", l, lag_s[l], sample_interval_s, n, "s");
    double sum = 0.0;
    std::size_t count = 0;
    for (std::size_t i = 0; i + k < n; ++i) {
      const double diff = series_m[(i + k) * stride] - series_m[i * stride];
      if (std::isfinite(diff)) {
        sum += diff * diff;
        ++count;
      }
    }
    estimate.separation.push_back(static_cast<double>(k) * sample_interval_s);
    estimate.value_m2.push_back(mean_or_nan(sum, count));
    estimate.pair_count.push_back(count);
  }
  return estimate;
}

}  // namespace wvr
