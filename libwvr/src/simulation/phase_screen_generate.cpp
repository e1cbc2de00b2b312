// Synthesis of one path screen on an N_along x N_across grid (wvr/phase_screen.hpp).
//
// FFT part: each frequency cell gets complex Gaussian noise of power Phi_2D(kappa) * cell area,
// so the real part of the transform has covariance sum Phi dkappa^2 cos(kappa.rho), the Riemann
// sum of the layer's covariance int d^2kappa Phi cos(kappa.rho). The output is real, so only the
// half-plane kx >= 0 is stored (Hermitian symmetry): a cell 0 < kx < Nyquist stands for the
// pair (kx, ky), (-kx, -ky) and gets E|c|^2 = power (the real inverse transform adds the
// conjugate, so each member contributes power * cos); the kx = 0 and Nyquist columns stand for
// themselves, get E|c|^2 = 2 power, and only the real part of their transform is kept.
//
// Low frequencies: a periodic grid misses the power inside the cells around kappa = 0, which
// matters because the spectrum is steep there (D at a quarter of the screen width loses 20-40%
// when the outer scale exceeds the screen). We use the subharmonic method of Lane, Glindemann
// & Dainty 1992 (Waves in Random Media 2, 209), not the modified scheme of Johansson & Gavel
// 1994: at level p = 1..P the zero cell is split 3 x 3 and the eight outer cells get one
// sinusoid each at their centre frequency. Two additions of ours:
//  * On the long, narrow strips used for whole nights the cells are very elongated
//    (dkx << dky), so the same 3-way split is applied to the whole ky = 0 row and kx = 0
//    column: at level p each of their cells loses two side thirds, represented by sinusoids at
//    ky = +-dky / 3^p (resp. kx = +-dkx / 3^p), and keeps a centre of width 1 / 3^P at ky = 0
//    (kx = 0). The cells still tile the frequency plane once, less the innermost 1 / 9^P of
//    the zero cell (the piston).
//  * Cells within two grid steps of kappa = 0 get the power that reproduces their contribution
//    to D at small separations instead of the midpoint value (see CellPower).
// Together these keep the expected D within ~5% of theory up to a quarter of the screen width
// for outer scales up to ~10x the width (a design study of the expected D of the quadrature;
// midpoint weights with Lane's subharmonics alone lose 10-25% across a 40:1 strip).
//
// Every low-frequency term has the separable form Re(X_q(x) * Y_q(y)), so its cost on the grid
// is one complex multiply-add per point (four terms per level); the row and column refinements
// need one extra 1-D FFT per level.

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>
#include <random>
#include <unsupported/Eigen/FFT>
#include <vector>

#include "core/gaussian_random.hpp"
#include "simulation/phase_screen_detail.hpp"
#include "wvr/phase_screen.hpp"

namespace wvr::detail::screen {
namespace {

using Complex = std::complex<double>;
constexpr double kPi = std::numbers::pi;
// Columns transformed together in the across-wind pass, so each gathered cache line is used.
constexpr std::size_t kColumnBlock = 8;

using detail::complex_gaussian;
using detail::uniform_open;

// Signed FFT frequency index of bin i in a length-n transform.
double signed_bin(std::size_t i, std::size_t n) {
  return i < (n + 1) / 2 ? static_cast<double>(i) : static_cast<double>(i) - static_cast<double>(n);
}

// Transforms every column (length ny) of a row-major [ny][width] array in place.
void fft_columns(Eigen::FFT<double>& fft,
                 std::vector<Complex>& field,
                 std::size_t width,
                 std::size_t ny) {
  std::vector<Complex> block(kColumnBlock * ny);
  std::vector<Complex> line(ny);
  for (std::size_t i0 = 0; i0 < width; i0 += kColumnBlock) {
    const std::size_t count = std::min(kColumnBlock, width - i0);
    for (std::size_t j = 0; j < ny; ++j) {
      for (std::size_t c = 0; c < count; ++c) block[c * ny + j] = field[j * width + i0 + c];
    }
    for (std::size_t c = 0; c < count; ++c) {
      Complex* column = block.data() + c * ny;
      fft.fwd(line.data(), column, static_cast<Eigen::Index>(ny));
      std::copy(line.begin(), line.end(), column);
    }
    for (std::size_t j = 0; j < ny; ++j) {
      for (std::size_t c = 0; c < count; ++c) field[j * width + i0 + c] = block[c * ny + j];
    }
  }
}

// Low-frequency terms Re(X_q(x_i) * Y_q(y_j)), stored for the row-by-row final pass.
class SeparableTerms {
 public:
  SeparableTerms(std::size_t nx, std::size_t ny) : nx_(nx), ny_(ny) {}

  // Appends the term Re(X(x_i) Y(y_j)); x_part has nx values, y_part ny.
  void add(std::vector<Complex> x_part, std::vector<Complex> y_part) {
    for (const Complex& v : x_part) {
      x_re_.push_back(v.real());
      x_im_.push_back(v.imag());
    }
    y_.insert(y_.end(), y_part.begin(), y_part.end());
    ++count_;
  }

  // row[i] += sum_q Re(X_q(x_i) Y_q(y_j)).
  void add_to_row(std::size_t j, double* row) const {
    for (std::size_t q = 0; q < count_; ++q) {
      const double* re = x_re_.data() + q * nx_;
      const double* im = x_im_.data() + q * nx_;
      const double c = y_[q * ny_ + j].real();
      const double s = y_[q * ny_ + j].imag();
      for (std::size_t i = 0; i < nx_; ++i) row[i] += re[i] * c - im[i] * s;
    }
  }

 private:
  std::size_t nx_;
  std::size_t ny_;
  std::size_t count_ = 0;
  std::vector<double> x_re_;
  std::vector<double> x_im_;
  std::vector<Complex> y_;
};

std::vector<Complex> plane_wave(double k_rad_per_m, std::size_t n, double dx) {
  std::vector<Complex> wave(n);
  for (std::size_t i = 0; i < n; ++i)
    wave[i] = std::polar(1.0, k_rad_per_m * static_cast<double>(i) * dx);
  return wave;
}

// Panel edges on [a, b] (a < b) for a function that varies on the scale of the distance to
// kappa = 0: widths grow geometrically from `first` away from the point nearest to 0.
std::vector<double> graded_edges(double a, double b, double first) {
  std::vector<double> edges;
  const auto grade = [&](double from, double to) {  // from is the end nearer to 0
    const double sign = to > from ? 1.0 : -1.0;
    const double length = std::abs(to - from);
    double width = first;
    for (double done = 0.0; done < length; width *= 2.0) {
      edges.push_back(from + sign * done);
      done += width;
    }
    edges.push_back(to);
  };
  if (a < 0.0 && b > 0.0) {
    grade(0.0, a);
    grade(0.0, b);
  } else if (b <= 0.0) {
    grade(b, a);
  } else {
    grade(a, b);
  }
  std::sort(edges.begin(), edges.end());
  edges.erase(std::unique(edges.begin(), edges.end()), edges.end());
  return edges;
}

// Powers of spectral cells. Far from kappa = 0 the spectrum is nearly linear across a cell and
// the midpoint value times the area is used. Near kappa = 0 it is steep (kappa^(-11/3)) and a
// single sinusoid at the centre cannot carry the cell's content correctly for both small and
// large separations; we give it the power that reproduces the cell's contribution to D in the
// small-separation limit, where 1 - cos(kappa.rho) ~ (kappa.rho)^2 / 2:
//   power = int_cell Phi(kappa) |kappa|^2 d^2kappa / |kappa_c|^2.
// The plain cell integral would be right for the variance but overweights these cells for D by
// up to 2x, the midpoint value underweights them.
class CellPower {
 public:
  CellPower(const SlabShape& shape, double normalisation, double low_radius)
      : shape_(shape), normalisation_(normalisation), low_radius_(low_radius) {}

  double operator()(double kx, double ky, double wx, double wy) const {
    const double k2 = kx * kx + ky * ky;
    if (k2 >= low_radius_ * low_radius_) return normalisation_ * shape_(std::sqrt(k2)) * wx * wy;
    const double x0 = kx - 0.5 * wx;
    const double x1 = kx + 0.5 * wx;
    const double y0 = ky - 0.5 * wy;
    const double y1 = ky + 0.5 * wy;
    const double near_x = (x0 < 0.0 && x1 > 0.0) ? 0.0 : std::min(std::abs(x0), std::abs(x1));
    const double near_y = (y0 < 0.0 && y1 > 0.0) ? 0.0 : std::min(std::abs(y0), std::abs(y1));
    const double first = std::max(std::hypot(near_x, near_y), 1e-6 * std::max(wx, wy));
    const std::vector<double> ex = graded_edges(x0, x1, first);
    const std::vector<double> ey = graded_edges(y0, y1, first);
    const GaussLegendreRule& rule = gauss_legendre(8);
    double sum = 0.0;
    for (std::size_t a = 0; a + 1 < ex.size(); ++a) {
      const double hx = 0.5 * (ex[a + 1] - ex[a]);
      const double mx = 0.5 * (ex[a + 1] + ex[a]);
      for (std::size_t b = 0; b + 1 < ey.size(); ++b) {
        const double hy = 0.5 * (ey[b + 1] - ey[b]);
        const double my = 0.5 * (ey[b + 1] + ey[b]);
        double panel = 0.0;
        for (std::size_t u = 0; u < rule.node.size(); ++u) {
          const double x = mx + hx * rule.node[u];
          for (std::size_t v = 0; v < rule.node.size(); ++v) {
            const double y = my + hy * rule.node[v];
            const double r2 = x * x + y * y;
            panel += rule.weight[u] * rule.weight[v] * shape_(std::sqrt(r2)) * r2;
          }
        }
        sum += hx * hy * panel;
      }
    }
    return normalisation_ * sum / k2;
  }

 private:
  SlabShape shape_;
  double normalisation_;
  double low_radius_;
};

}  // namespace

std::size_t next_fft_size(std::size_t n) {
  for (std::size_t m = std::max<std::size_t>(n, 1);; ++m) {
    std::size_t r = m;
    for (std::size_t p : {2u, 3u, 5u}) {
      while (r % p == 0) r /= p;
    }
    if (r == 1) return m;
  }
}

std::vector<float> generate_path_screen(const TurbulentLayer& layer,
                                        const ScreenGrid& grid,
                                        std::uint64_t seed,
                                        int subharmonic_levels) {
  const std::size_t nx = grid.points_along;
  const std::size_t ny = grid.points_across;
  const double dx = grid.spacing_m;
  const double dkx = 2.0 * kPi / (static_cast<double>(nx) * dx);
  const double dky = 2.0 * kPi / (static_cast<double>(ny) * dx);
  const int levels = std::max(subharmonic_levels, 0);
  const double axis_fraction = std::pow(3.0, -levels);  // width kept by the ky = 0 / kx = 0 cells
  const SlabShape shape{layer.thickness_m, 2.0 * kPi / layer.outer_scale_m};
  const double normalisation = slab_normalisation(layer);
  // Cells within two grid steps of kappa = 0 get integrated powers (see CellPower).
  const double low_radius = 2.0 * std::max(dkx, dky);
  const CellPower power(shape, normalisation, low_radius);
  std::mt19937_64 rng(seed);

  // ---- FFT part on the half-plane kx >= 0 ----
  const double log_scale = std::log(normalisation * dkx * dky);
  const double log_half_thickness = std::log(0.5 * layer.thickness_m);
  const double k0_squared = shape.k0_rad_per_m * shape.k0_rad_per_m;
  const std::size_t half_width = nx / 2 + 1;
  const bool has_nyquist = nx % 2 == 0;
  std::vector<Complex> field(half_width * ny);
  for (std::size_t j = 0; j < ny; ++j) {
    const double ky = signed_bin(j, ny) * dky;
    const double ky2_k02 = ky * ky + k0_squared;
    Complex* row = field.data() + j * half_width;
    for (std::size_t i = 0; i < half_width; ++i) {
      const Complex noise = complex_gaussian(rng);
      if (i == 0 && j == 0) continue;
      const double kx = static_cast<double>(i) * dkx;
      const bool single = i == 0 || (has_nyquist && i == half_width - 1);
      double cell_power = 0.0;
      if (kx * kx + ky * ky < low_radius * low_radius) {
        cell_power =
            power(kx, ky, i == 0 ? dkx * axis_fraction : dkx, j == 0 ? dky * axis_fraction : dky);
      } else {
        const double on_axis = (i == 0 || j == 0) ? axis_fraction : 1.0;
        cell_power = on_axis * std::exp(log_scale + log_slab_shape(std::log(kx * kx + ky2_k02),
                                                                   log_half_thickness));
      }
      // E|noise|^2 = 2: amplitude sqrt(power / 2) for a pair cell, sqrt(power) for a single.
      row[i] = std::sqrt(cell_power * (single ? 1.0 : 0.5)) * noise;
    }
  }
  Eigen::FFT<double> fft;
  fft.SetFlag(Eigen::FFT<double>::Unscaled);
  fft_columns(fft, field, half_width, ny);
  for (std::size_t j = 0; j < ny; ++j) {
    Complex* row = field.data() + j * half_width;
    row[0] = row[0].real();
    if (has_nyquist) row[half_width - 1] = row[half_width - 1].real();
  }

  // ---- low-frequency refinement ----
  SeparableTerms terms(nx, ny);
  double fraction = 1.0;
  for (int p = 1; p <= levels; ++p) {
    fraction /= 3.0;
    const double dkx_p = dkx * fraction;
    const double dky_p = dky * fraction;
    // ky = 0 row: side cells at (kx_i, +dky_p) for every kx_i != 0, paired with their mirrors
    // (-kx_i, -dky_p): term 2 Re(sum_i c_i exp(-i kx_i x) exp(i dky_p y)) via one FFT in x.
    std::vector<Complex> row_part(nx);
    {
      std::vector<Complex> coefficients(nx);
      for (std::size_t i = 1; i < nx; ++i) {
        const Complex noise = complex_gaussian(rng);
        const double kx = -signed_bin(i, nx) * dkx;  // the forward FFT below uses exp(-i ...)
        coefficients[i] = 2.0 * std::sqrt(0.5 * power(kx, dky_p, dkx, dky_p)) * noise;
      }
      fft.fwd(row_part.data(), coefficients.data(), static_cast<Eigen::Index>(nx));
    }
    // Zero cell (Lane et al. 1992): eight cells of dkx_p x dky_p, each its own sinusoid;
    // grouped by n so that X_n(x) = sum_m c_mn exp(i m dkx_p x), Y_n(y) = exp(i n dky_p y).
    // The row term above shares Y_1 and joins that group.
    for (int n = -1; n <= 1; ++n) {
      std::vector<Complex> x_part = n == 1 ? row_part : std::vector<Complex>(nx);
      for (int m = -1; m <= 1; ++m) {
        const Complex noise = complex_gaussian(rng);
        if (m == 0 && n == 0) continue;
        const Complex c = std::sqrt(power(m * dkx_p, n * dky_p, dkx_p, dky_p)) * noise;
        const std::vector<Complex> wave = plane_wave(m * dkx_p, nx, dx);
        for (std::size_t i = 0; i < nx; ++i) x_part[i] += c * wave[i];
      }
      terms.add(std::move(x_part), plane_wave(n * dky_p, ny, dx));
    }
    // kx = 0 column: side cells at (+dkx_p, ky_j) for every ky_j != 0, likewise paired.
    {
      std::vector<Complex> coefficients(ny);
      for (std::size_t j = 1; j < ny; ++j) {
        const Complex noise = complex_gaussian(rng);
        const double ky = -signed_bin(j, ny) * dky;
        coefficients[j] = 2.0 * std::sqrt(0.5 * power(dkx_p, ky, dkx_p, dky)) * noise;
      }
      std::vector<Complex> y_part(ny);
      fft.fwd(y_part.data(), coefficients.data(), static_cast<Eigen::Index>(ny));
      terms.add(plane_wave(dkx_p, nx, dx), std::move(y_part));
    }
  }

  // ---- real inverse transform of each row plus the low-frequency terms ----
  std::vector<float> path(nx * ny);
  std::vector<double> row_values(nx);
  for (std::size_t j = 0; j < ny; ++j) {
    fft.inv(row_values.data(), field.data() + j * half_width, static_cast<Eigen::Index>(nx));
    terms.add_to_row(j, row_values.data());
    float* out = path.data() + j * nx;
    for (std::size_t i = 0; i < nx; ++i) out[i] = static_cast<float>(row_values[i]);
  }
  return path;
}

}  // namespace wvr::detail::screen
