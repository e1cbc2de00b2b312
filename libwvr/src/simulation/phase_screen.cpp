// Grid planning and frozen-flow sampling of turbulence path screens (wvr/phase_screen.hpp);
// the synthesis itself is in phase_screen_generate.cpp.

#include "wvr/phase_screen.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "simulation/phase_screen_detail.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

constexpr int kMaxSubharmonicLevels = 8;
// Hard ceiling on grid points whatever the options say (float storage alone is 4 bytes each).
constexpr double kMaxGridPoints = 1e9;

std::string indexed(const char* field, std::size_t index) {
  return std::string(field) + "[" + std::to_string(index) + "]";
}

void validate_grid(const ScreenGrid& grid, int subharmonic_levels) {
  require_finite("spacing_m", grid.spacing_m);
  if (!(grid.spacing_m > 0.0)) {
    throw InvalidInput(describe_value("spacing_m", grid.spacing_m) + " must be > 0 m");
  }
  if (grid.points_along < kMinScreenPoints) {
    throw InvalidInput("points_along = " + std::to_string(grid.points_along) +
                       " is below the minimum of " + std::to_string(kMinScreenPoints));
  }
  if (grid.points_across < kMinScreenPoints) {
    throw InvalidInput("points_across = " + std::to_string(grid.points_across) +
                       " is below the minimum of " + std::to_string(kMinScreenPoints));
  }
  if (static_cast<double>(grid.points_along) * static_cast<double>(grid.points_across) >
      kMaxGridPoints) {
    throw InvalidInput("points_along x points_across = " + std::to_string(grid.points_along) +
                       " x " + std::to_string(grid.points_across) + " exceeds 1e9 points");
  }
  require_finite("origin_along_m", grid.origin_along_m);
  require_finite("origin_across_m", grid.origin_across_m);
  if (subharmonic_levels < 0 || subharmonic_levels > kMaxSubharmonicLevels) {
    throw InvalidInput("subharmonic_levels = " + std::to_string(subharmonic_levels) +
                       " is outside [0, " + std::to_string(kMaxSubharmonicLevels) + "]");
  }
}

}  // namespace

void validate_screen_options(const ScreenOptions& options) {
  require_finite("spacing_m", options.spacing_m);
  if (!(options.spacing_m > 0.0)) {
    throw InvalidInput(describe_value("spacing_m", options.spacing_m) + " must be > 0 m");
  }
  require_finite("margin_m", options.margin_m);
  if (options.margin_m < 0.0) {
    throw InvalidInput(describe_value("margin_m", options.margin_m) + " must be >= 0 m");
  }
  if (options.subharmonic_levels < 0 || options.subharmonic_levels > kMaxSubharmonicLevels) {
    throw InvalidInput("subharmonic_levels = " + std::to_string(options.subharmonic_levels) +
                       " is outside [0, " + std::to_string(kMaxSubharmonicLevels) + "]");
  }
  if (options.max_grid_points < kMinScreenPoints * kMinScreenPoints) {
    throw InvalidInput("max_grid_points = " + std::to_string(options.max_grid_points) +
                       " is below the smallest screen of " +
                       std::to_string(kMinScreenPoints * kMinScreenPoints) + " points");
  }
}

ScreenGrid plan_screen_grid(const TurbulentLayer& layer,
                            std::span<const double> east_m,
                            std::span<const double> north_m,
                            double start_time_s,
                            double end_time_s,
                            const ScreenOptions& options) {
  validate_layer(layer);
  validate_screen_options(options);
  if (east_m.empty()) throw InvalidInput("east_m is empty: at least one antenna is needed");
  if (north_m.size() != east_m.size()) {
    throw InvalidInput("north_m has " + std::to_string(north_m.size()) + " values but east_m has " +
                       std::to_string(east_m.size()));
  }
  require_finite("start_time_s", start_time_s);
  require_finite("end_time_s", end_time_s);
  if (end_time_s < start_time_s) {
    throw InvalidInput(describe_value("end_time_s", end_time_s) + " is before " +
                       describe_value("start_time_s", start_time_s));
  }
  const double speed = std::hypot(layer.wind_east_m_s, layer.wind_north_m_s);
  const double ue = speed > 0.0 ? layer.wind_east_m_s / speed : 1.0;
  const double un = speed > 0.0 ? layer.wind_north_m_s / speed : 0.0;
  double along_lo = std::numeric_limits<double>::infinity();
  double along_hi = -along_lo;
  double across_lo = along_lo;
  double across_hi = -along_lo;
  for (std::size_t k = 0; k < east_m.size(); ++k) {
    require_finite(indexed("east_m", k), east_m[k]);
    require_finite(indexed("north_m", k), north_m[k]);
    const double along = east_m[k] * ue + north_m[k] * un;
    const double across = -east_m[k] * un + north_m[k] * ue;
    along_lo = std::min(along_lo, along);
    along_hi = std::max(along_hi, along);
    across_lo = std::min(across_lo, across);
    across_hi = std::max(across_hi, across);
  }
  // The air moves along +wind, so a fixed antenna reads screen coordinates that decrease
  // with time: along - speed * t.
  along_lo -= speed * end_time_s + options.margin_m;
  along_hi -= speed * start_time_s - options.margin_m;
  across_lo -= options.margin_m;
  across_hi += options.margin_m;
  const double dx = options.spacing_m;
  // The along-wind length is also a multiple of 4, the fast case of Eigen's real FFT.
  const auto points_for = [&](double extent_m, const char* field, std::size_t multiple) {
    const double needed = std::ceil(extent_m / dx) + 1.0;
    if (!(needed <= static_cast<double>(options.max_grid_points))) {
      throw InvalidInput(std::string(field) + " would need " + describe_value("points", needed) +
                         ", above max_grid_points = " + std::to_string(options.max_grid_points) +
                         "; increase spacing_m or shorten the night");
    }
    const std::size_t points = std::max(kMinScreenPoints, static_cast<std::size_t>(needed));
    return multiple * detail::screen::next_fft_size((points + multiple - 1) / multiple);
  };
  ScreenGrid grid;
  grid.spacing_m = dx;
  grid.points_along = points_for(along_hi - along_lo, "points_along", 4);
  grid.points_across = points_for(across_hi - across_lo, "points_across", 1);
  if (static_cast<double>(grid.points_along) * static_cast<double>(grid.points_across) >
      static_cast<double>(options.max_grid_points)) {
    throw InvalidInput("points_along x points_across = " + std::to_string(grid.points_along) +
                       " x " + std::to_string(grid.points_across) +
                       " exceeds max_grid_points = " + std::to_string(options.max_grid_points) +
                       "; increase spacing_m, reduce margin_m or shorten the night");
  }
  // Centre the covered region in the (rounded-up) grid.
  grid.origin_along_m =
      along_lo - 0.5 * (static_cast<double>(grid.points_along - 1) * dx - (along_hi - along_lo));
  grid.origin_across_m = across_lo - 0.5 * (static_cast<double>(grid.points_across - 1) * dx -
                                            (across_hi - across_lo));
  return grid;
}

PhaseScreen::PhaseScreen(const TurbulentLayer& layer,
                         const ScreenGrid& grid,
                         std::uint64_t seed,
                         int subharmonic_levels)
    : layer_(layer), grid_(grid) {
  validate_layer(layer);
  validate_grid(grid, subharmonic_levels);
  speed_m_s_ = std::hypot(layer.wind_east_m_s, layer.wind_north_m_s);
  if (speed_m_s_ > 0.0) {
    unit_east_ = layer.wind_east_m_s / speed_m_s_;
    unit_north_ = layer.wind_north_m_s / speed_m_s_;
  }

  path_ = detail::screen::generate_path_screen(layer, grid, seed, subharmonic_levels);
}

void PhaseScreen::to_grid(double east_m,
                          double north_m,
                          double time_s,
                          double* x_along,
                          double* y_across) const noexcept {
  const double along = east_m * unit_east_ + north_m * unit_north_ - speed_m_s_ * time_s;
  const double across = -east_m * unit_north_ + north_m * unit_east_;
  *x_along = (along - grid_.origin_along_m) / grid_.spacing_m;
  *y_across = (across - grid_.origin_across_m) / grid_.spacing_m;
}

bool PhaseScreen::covers(double east_m, double north_m, double time_s) const noexcept {
  double x = 0.0;
  double y = 0.0;
  to_grid(east_m, north_m, time_s, &x, &y);
  return x >= 0.0 && x <= static_cast<double>(grid_.points_along - 1) && y >= 0.0 &&
         y <= static_cast<double>(grid_.points_across - 1);
}

double PhaseScreen::path_m(double east_m, double north_m, double time_s) const noexcept {
  double x = 0.0;
  double y = 0.0;
  to_grid(east_m, north_m, time_s, &x, &y);
  if (!std::isfinite(x) || !std::isfinite(y)) return std::numeric_limits<double>::quiet_NaN();
  const std::size_t nx = grid_.points_along;
  const std::size_t ny = grid_.points_across;
  // Periodic wrap (see the class comment); a no-op inside the grid.
  const auto wrap = [](double v, std::size_t n, std::size_t* index, std::size_t* next) {
    const double period = static_cast<double>(n);
    if (!(v >= 0.0 && v < period)) {
      v -= period * std::floor(v / period);
      if (v < 0.0) v += period;    // floor(v / period) rounded up
      if (!(v < period)) v = 0.0;  // v rounded up to the period
    }
    const auto i = static_cast<std::size_t>(v);
    *index = i;
    *next = i + 1 == n ? 0 : i + 1;
    return v - static_cast<double>(i);
  };
  std::size_t i0 = 0;
  std::size_t i1 = 0;
  std::size_t j0 = 0;
  std::size_t j1 = 0;
  const double fx = wrap(x, nx, &i0, &i1);
  const double fy = wrap(y, ny, &j0, &j1);
  const float* r0 = path_.data() + j0 * nx;
  const float* r1 = path_.data() + j1 * nx;
  const double low = r0[i0] + fx * (static_cast<double>(r0[i1]) - r0[i0]);
  const double high = r1[i0] + fx * (static_cast<double>(r1[i1]) - r1[i0]);
  return low + fy * (high - low);
}

void PhaseScreen::sample_paths_m(std::span<const double> east_m,
                                 std::span<const double> north_m,
                                 std::span<const double> time_s,
                                 std::span<double> path_m) const {
  const std::size_t n_ant = east_m.size();
  if (north_m.size() != n_ant) {
    throw InvalidInput("north_m has " + std::to_string(north_m.size()) + " values but east_m has " +
                       std::to_string(n_ant));
  }
  if (path_m.size() != time_s.size() * n_ant) {
    throw InvalidInput("path_m has " + std::to_string(path_m.size()) + " values, expected " +
                       std::to_string(time_s.size()) + " times x " + std::to_string(n_ant) +
                       " antennas");
  }
  if (n_ant == 0 || time_s.empty()) return;
  double t_min = std::numeric_limits<double>::infinity();
  double t_max = -t_min;
  for (std::size_t t = 0; t < time_s.size(); ++t) {
    require_finite(indexed("time_s", t), time_s[t]);
    t_min = std::min(t_min, time_s[t]);
    t_max = std::max(t_max, time_s[t]);
  }

  // Per-antenna constants: across-wind rows and weight, along-wind position at t = 0.
  const std::size_t nx = grid_.points_along;
  const std::size_t ny = grid_.points_across;
  std::vector<double> x0(n_ant);
  std::vector<double> fy(n_ant);
  std::vector<const float*> row0(n_ant);
  for (std::size_t a = 0; a < n_ant; ++a) {
    require_finite(indexed("east_m", a), east_m[a]);
    require_finite(indexed("north_m", a), north_m[a]);
    for (double t : {t_min, t_max}) {
      if (!covers(east_m[a], north_m[a], t)) {
        throw InvalidInput("antenna " + std::to_string(a) + " at east_m = " +
                           std::to_string(east_m[a]) + ", north_m = " + std::to_string(north_m[a]) +
                           " leaves the screen grid at " + describe_value("time_s", t) +
                           "; plan the grid for the whole night with plan_screen_grid()");
      }
    }
    double y = 0.0;
    to_grid(east_m[a], north_m[a], 0.0, &x0[a], &y);
    const std::size_t j = std::min(static_cast<std::size_t>(y), ny - 2);
    fy[a] = y - static_cast<double>(j);
    row0[a] = path_.data() + j * nx;
  }

  // Hot loop: times outer (rows of the output), antennas inner; two grid rows per antenna.
  const double shift_per_s = speed_m_s_ / grid_.spacing_m;
  const std::size_t last = nx - 2;
  for (std::size_t t = 0; t < time_s.size(); ++t) {
    const double shift = shift_per_s * time_s[t];
    double* out = path_m.data() + t * n_ant;
    for (std::size_t a = 0; a < n_ant; ++a) {
      // Coverage was checked for t_min and t_max, and x is monotonic in t, so x >= 0 here.
      const double x = std::max(x0[a] - shift, 0.0);
      const std::size_t i = std::min(static_cast<std::size_t>(x), last);
      const double fx = x - static_cast<double>(i);
      const float* r0 = row0[a] + i;
      const float* r1 = r0 + nx;
      const double low = r0[0] + fx * (static_cast<double>(r0[1]) - r0[0]);
      const double high = r1[0] + fx * (static_cast<double>(r1[1]) - r1[0]);
      out[a] = low + fy[a] * (high - low);
    }
  }
}

PhaseScreen make_night_screen(const TurbulentLayer& layer,
                              std::span<const double> east_m,
                              std::span<const double> north_m,
                              double start_time_s,
                              double end_time_s,
                              std::uint64_t seed,
                              const ScreenOptions& options) {
  const ScreenGrid grid =
      plan_screen_grid(layer, east_m, north_m, start_time_s, end_time_s, options);
  return PhaseScreen(layer, grid, seed, options.subharmonic_levels);
}

}  // namespace wvr
