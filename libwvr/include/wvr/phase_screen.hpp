#pragma once
// Frozen-flow turbulence path screens: the excess-path field of one turbulent layer
// (wvr/turbulent_layer.hpp), moving over the array with the wind, for the synthetic-night
// simulator and for diagnostics.
//
// Usage:
//   wvr::TurbulentLayer layer;              // 1 km thick wet layer, 10 m/s from the west
//   layer.path_rms_at_reference_m = 0.3e-3; // 0.3 mm rms path difference on 1 km
//   wvr::PhaseScreen screen = wvr::make_night_screen(layer, east_m, north_m, 0.0, 8 * 3600.0,
//                                                    /*seed=*/42);
//   std::vector<double> path_m(time_s.size() * east_m.size());
//   screen.sample_paths_m(east_m, north_m, time_s, path_m);  // [time x antenna], row-major

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "wvr/structure_function_estimate.hpp"
#include "wvr/turbulent_layer.hpp"

namespace wvr {

// Geometry of a screen grid. The grid is aligned with the wind: index i runs along the wind
// direction (the contiguous memory axis), index j across it (90 degrees counter-clockwise
// from the wind, seen from above). With no wind the along axis points east.
// Screen-frame coordinates of a ground point (east, north) at time t are
//   along  = (east, north) . wind_unit - |wind| * t,    across = (east, north) . across_unit
// and grid point (i, j) sits at along = origin_along_m + i * spacing_m,
// across = origin_across_m + j * spacing_m.
struct ScreenGrid {
  double spacing_m = 10.0;
  std::size_t points_along = 0;
  std::size_t points_across = 0;
  double origin_along_m = 0.0;
  double origin_across_m = 0.0;
};

// Smallest grid dimension accepted, so that the FFT and the subharmonics make sense.
inline constexpr std::size_t kMinScreenPoints = 16;

// How plan_screen_grid sizes a screen.
struct ScreenOptions {
  double spacing_m = 10.0;     // grid step (m): well below the shortest baseline of interest
  double margin_m = 1000.0;    // extra screen beyond the array and the night's flow, each side (m)
  int subharmonic_levels = 3;  // low-frequency refinement levels (0 disables), 0..8
  std::size_t max_grid_points = 60'000'000;  // guard: generation peaks at ~12 bytes/point
};

// Throws InvalidInput naming the bad field of the options.
void validate_screen_options(const ScreenOptions& options);

// Chooses a grid covering every antenna position over [start_time_s, end_time_s] under frozen
// flow, plus margin_m on every side. Dimensions are rounded up to FFT-friendly sizes (products
// of 2, 3 and 5), so the along-wind length is about |wind| * duration + array extent.
// Throws InvalidInput for mismatched or non-finite positions, end_time_s < start_time_s, bad
// options, or a grid above options.max_grid_points.
ScreenGrid plan_screen_grid(const TurbulentLayer& layer,
                            std::span<const double> east_m,
                            std::span<const double> north_m,
                            double start_time_s,
                            double end_time_s,
                            const ScreenOptions& options = {});

// One realisation of a layer's path screen, stored as float path values (m) on the grid.
//
// Generation: complex Gaussian noise shaped by sqrt(Phi_2D * dkappa_x * dkappa_y) on the
// N_along x N_across FFT grid, transformed with Eigen's FFT (real output); frequencies below
// the grid's fundamental are added with the subharmonic method of Lane, Glindemann & Dainty
// 1992 (Waves in Random Media 2, 209), extended to the kx = 0 / ky = 0 lines of long strips,
// with integrated powers for the cells next to kappa = 0 (details in
// libwvr/src/simulation/phase_screen_generate.cpp). Deterministic for a given seed (std::mt19937_64
// with our own Box-Muller transform, so no library-specific distribution is involved). Cost: ~100
// ns and 12 bytes per grid point while generating, 4 bytes kept; a 64-antenna, 8-hour night at 10
// m/s with 10 m spacing is a 30000 x 720 grid (~2 s, 86 MB kept).
//
// Coverage: the FFT part of the field is periodic over the grid, the subharmonics are not.
// Points outside the grid wrap around periodically in path_m() (the field then repeats with a
// seam), so plan the grid for the whole night with plan_screen_grid(); sample_paths_m()
// refuses samples outside the grid instead.
class PhaseScreen {
 public:
  // Validates the inputs (InvalidInput) and generates the screen.
  PhaseScreen(const TurbulentLayer& layer,
              const ScreenGrid& grid,
              std::uint64_t seed,
              int subharmonic_levels = 3);

  const TurbulentLayer& layer() const noexcept { return layer_; }
  const ScreenGrid& grid() const noexcept { return grid_; }
  double wind_speed_m_s() const noexcept { return speed_m_s_; }

  // Path (m) stored at grid point (i_along, j_across); indices must be inside the grid.
  double grid_path_m(std::size_t i_along, std::size_t j_across) const noexcept {
    return path_[j_across * grid_.points_along + i_along];
  }

  // All grid values (m), indexed [j_across * points_along + i_along].
  std::span<const float> grid_values() const noexcept { return path_; }

  // True when (east, north) at time t maps inside the grid.
  bool covers(double east_m, double north_m, double time_s) const noexcept;

  // Path (m) at one ground point and time: bilinear interpolation on the grid, frozen flow,
  // periodic wrap outside the grid. NaN for non-finite inputs.
  double path_m(double east_m, double north_m, double time_s) const noexcept;

  // Fills path_m[t * n_antennas + a] with the path of antenna a at time_s[t] (row-major
  // [time x antenna]). Throws InvalidInput for mismatched sizes, non-finite values, or samples
  // outside the grid; otherwise a tight loop with no allocation per sample.
  void sample_paths_m(std::span<const double> east_m,
                      std::span<const double> north_m,
                      std::span<const double> time_s,
                      std::span<double> path_m) const;

  // Bytes held by the screen values.
  std::size_t memory_bytes() const noexcept { return path_.size() * sizeof(float); }

 private:
  void to_grid(double east_m,
               double north_m,
               double time_s,
               double* x_along,
               double* y_across) const noexcept;

  TurbulentLayer layer_;
  ScreenGrid grid_;
  double unit_east_ = 1.0;  // wind direction unit vector
  double unit_north_ = 0.0;
  double speed_m_s_ = 0.0;
  std::vector<float> path_;  // [j_across][i_along], metres
};

// plan_screen_grid() followed by the PhaseScreen constructor.
PhaseScreen make_night_screen(const TurbulentLayer& layer,
                              std::span<const double> east_m,
                              std::span<const double> north_m,
                              double start_time_s,
                              double end_time_s,
                              std::uint64_t seed,
                              const ScreenOptions& options = {});

enum class ScreenAxis { kAlongWind, kAcrossWind };

// Mean of (p(x + d) - p(x))^2 over every pair of grid points d apart along `axis` (pairs that
// would wrap around the grid edge are not used). Each separation is rounded to a whole number
// of grid steps, >= 1 and < the grid length on that axis (otherwise InvalidInput); the
// separations actually used are returned.
StructureFunctionEstimate screen_structure_function(const PhaseScreen& screen,
                                                    std::span<const double> separation_m,
                                                    ScreenAxis axis);

}  // namespace wvr
