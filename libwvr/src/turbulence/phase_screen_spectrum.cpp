// Theory of one turbulent layer's path screen: the slab spectrum and its structure function.
//
// Sources (formulas quoted from memory):
//  * von Karman spectrum of refractivity, Phi_3D(k) ~ (k^2 + k0^2)^(-11/6), k0 = 2 pi / L0,
//    and the Kolmogorov -11/3 law: Tatarskii 1961, "Wave propagation in a turbulent medium".
//  * Path of a slab of thickness W: Phi_2D(kappa) = int dk_z Phi_3D(sqrt(kappa^2 + k_z^2))
//    W^2 sinc^2(k_z W / 2); thick (d^(5/3)) and thin (d^(2/3)) regimes: Stotskii 1992 and
//    Lay 1997, A&AS 122, 535.
//  * Structure function of an isotropic 2-D field with covariance B = int d^2kappa Phi e^{i k.r}:
//    D(d) = 2 (B(0) - B(d)) = 4 pi int kappa Phi(kappa) (1 - J0(kappa d)) dkappa.
//
// Substituting u = k_z W / 2 and a^2 = kappa^2 + k0^2 turns the slab integral into
//   Phi_2D(kappa) = 4 W a^(-11/3) I(a W / 2),  I(s) = int_0^inf (1 + (u/s)^2)^(-11/6) sinc^2 u du,
// so one dimensionless table of I(s) serves every layer and wavenumber.

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <numbers>
#include <vector>

#include "simulation/phase_screen_detail.hpp"
#include "wvr/error.hpp"
#include "wvr/phase_screen.hpp"

namespace wvr::detail::screen {
namespace {

constexpr double kPi = std::numbers::pi;

// Composite Gauss-Legendre over the given panel edges.
template <typename F>
double integrate_panels(const F& f, const std::vector<double>& edges, int points) {
  const GaussLegendreRule& rule = gauss_legendre(points);
  double sum = 0.0;
  for (std::size_t p = 0; p + 1 < edges.size(); ++p) {
    const double half = 0.5 * (edges[p + 1] - edges[p]);
    if (!(half > 0.0)) continue;
    const double mid = 0.5 * (edges[p + 1] + edges[p]);
    double panel = 0.0;
    for (std::size_t i = 0; i < rule.node.size(); ++i) {
      panel += rule.weight[i] * f(mid + half * rule.node[i]);
    }
    sum += half * panel;
  }
  return sum;
}

std::vector<double> log_edges(double lo, double hi, double panels_per_decade) {
  std::vector<double> edges{lo};
  if (!(hi > lo)) return edges;
  const auto n = static_cast<std::size_t>(std::ceil(std::log10(hi / lo) * panels_per_decade));
  const double step = std::log(hi / lo) / static_cast<double>(n);
  for (std::size_t i = 1; i < n; ++i) edges.push_back(lo * std::exp(step * static_cast<double>(i)));
  edges.push_back(hi);
  return edges;
}

// ---- the slab integral I(s) ----

double slab_weight(double u, double s) {
  const double r = u / s;
  return std::pow(1.0 + r * r, -11.0 / 6.0);
}

struct SlabTable {
  // ln I on a uniform grid in ln s. Outside it the asymptotes take over: below, I is linear
  // in s up to O(s^2) relative; above, I = pi/2 - c1/s up to exponentially small terms.
  static constexpr double kLogLo = -4.0 * std::numbers::ln10;  // s = 1e-4
  static constexpr double kLogHi = 5.0 * std::numbers::ln10;   // s = 1e5
  static constexpr int kPerDecade = 24;
  static constexpr int kPoints = 9 * kPerDecade + 1;
  static constexpr double kStep = (kLogHi - kLogLo) / (kPoints - 1);
  std::array<double, kPoints> log_value{};
  double high_deficit = 0.0;  // pi/2 - I(s_hi)

  SlabTable() {
    for (int i = 0; i < kPoints; ++i) {
      log_value[static_cast<std::size_t>(i)] =
          std::log(slab_integral_direct(std::exp(kLogLo + kStep * i)));
    }
    high_deficit = kPi / 2.0 - std::exp(log_value[kPoints - 1]);
  }
};

const SlabTable& slab_table() {
  static const SlabTable table;
  return table;
}

constexpr double kLogPanelsPerDecade = 8.0;
constexpr int kPanelPoints = 10;
constexpr double kHighDecades = 1e6;  // integrate the kappa^(-11/3) range this far, then analytic
constexpr double kLowFactor = 1e-4;   // start this far below the flat part of the spectrum

// 4 pi int_K^inf kappa Phi dkappa for Phi ~ kappa^(-11/3) beyond K.
double power_law_tail(double spectrum_at_k, double k) {
  return 4.0 * kPi * spectrum_at_k * k * k * 3.0 / 5.0;
}

}  // namespace

double integrate_panel(const std::function<double(double)>& f, double a, double b, int points) {
  return integrate_panels(f, std::vector<double>{a, b}, points);
}

double slab_integral_direct(double s) {
  // Panels end at the zeros of sinc (n pi) and on a geometric ladder around the scale s of
  // the von Karman factor, so both the oscillation and the knee are resolved.
  constexpr int kPeriods = 200;
  const double u_end = kPeriods * kPi;
  std::vector<double> edges;
  edges.reserve(kPeriods + 64);
  for (int n = 0; n <= kPeriods; ++n) edges.push_back(n * kPi);
  for (double u = s / 256.0; u < u_end; u *= 2.0) edges.push_back(u);
  std::sort(edges.begin(), edges.end());
  const auto body = [s](double u) {
    const double sinc = std::sin(u) / u;
    return slab_weight(u, s) * sinc * sinc;
  };
  const double main = integrate_panels(body, edges, 20);

  // Beyond u_end sin^2 averages to 1/2 over the slowly varying weight (the neglected cos(2u)
  // part is below 1/(4 u_end^2) relative). With u = u_end / t the tail is
  // (1 / (2 u_end)) int_0^1 w(u_end / t) dt, integrated on a geometric ladder in t.
  std::vector<double> t_edges;
  for (int j = 100; j >= 0; --j) t_edges.push_back(std::ldexp(1.0, -j));
  const auto tail_body = [s, u_end](double t) { return slab_weight(u_end / t, s); };
  const double tail = integrate_panels(tail_body, t_edges, 10) / (2.0 * u_end);
  return main + tail;
}

double one_minus_bessel_j0(double x) noexcept {
  x = std::abs(x);
  if (x <= 12.0) {
    // 1 - J0 = -sum_{k>=1} (-x^2/4)^k / (k!)^2; the largest term is ~2e4 at x = 12, so the
    // sum keeps ~12 significant digits, and there is no cancellation against 1 at small x.
    const double q = -0.25 * x * x;
    double term = 1.0;
    double sum = 0.0;
    for (int k = 1; k < 60; ++k) {
      term *= q / (static_cast<double>(k) * k);
      sum -= term;
      if (std::abs(term) < 1e-17 * std::abs(sum)) break;
    }
    return sum;
  }
  // Hankel's asymptotic expansion (Abramowitz & Stegun 9.2.5, 9.2.9, 9.2.10 with nu = 0, from
  // memory): J0 = sqrt(2 / (pi x)) (P cos(x - pi/4) - Q sin(x - pi/4)) with
  //   t_k = prod_{m=1..k} -(2m - 1)^2 / (8 m x),  P = 1 - t_2 + t_4 - ...,  Q = t_1 - t_3 + ...
  // summed until the terms stop shrinking; at x > 12 the smallest term is below 1e-10.
  double p = 1.0;
  double q = 0.0;
  double term = 1.0;
  for (int k = 1; k < 60; ++k) {
    const double next = term * (-(2.0 * k - 1.0) * (2.0 * k - 1.0)) / (8.0 * k * x);
    if (std::abs(next) >= std::abs(term)) break;
    term = next;
    switch (k % 4) {
      case 1:
        q += term;
        break;
      case 2:
        p -= term;
        break;
      case 3:
        q -= term;
        break;
      default:
        p += term;
        break;
    }
    if (std::abs(term) < 1e-17) break;
  }
  const double phase = x - kPi / 4.0;
  return 1.0 - std::sqrt(2.0 / (kPi * x)) * (p * std::cos(phase) - q * std::sin(phase));
}

double log_slab_integral(double log_s) noexcept {
  const SlabTable& table = slab_table();
  if (log_s <= SlabTable::kLogLo) return table.log_value[0] + (log_s - SlabTable::kLogLo);
  if (log_s >= SlabTable::kLogHi) {
    return std::log(kPi / 2.0 - table.high_deficit * std::exp(SlabTable::kLogHi - log_s));
  }
  // Four-point Lagrange interpolation on the uniform ln s grid.
  const double position = (log_s - SlabTable::kLogLo) / SlabTable::kStep;
  const int start = std::clamp(static_cast<int>(position) - 1, 0, SlabTable::kPoints - 4);
  const double t = position - start;
  const double* y = &table.log_value[static_cast<std::size_t>(start)];
  const double l0 = -(t - 1.0) * (t - 2.0) * (t - 3.0) / 6.0;
  const double l1 = t * (t - 2.0) * (t - 3.0) / 2.0;
  const double l2 = -t * (t - 1.0) * (t - 3.0) / 2.0;
  const double l3 = t * (t - 1.0) * (t - 2.0) / 6.0;
  return l0 * y[0] + l1 * y[1] + l2 * y[2] + l3 * y[3];
}

double slab_integral(double s) { return std::exp(log_slab_integral(std::log(s))); }

double log_slab_shape(double log_a2, double log_half_thickness) noexcept {
  // 4 W a^(-11/3) I(a W / 2) with 4 W = 8 (W / 2).
  return std::numbers::ln2 * 3.0 + log_half_thickness - 11.0 / 6.0 * log_a2 +
         log_slab_integral(0.5 * log_a2 + log_half_thickness);
}

double SlabShape::operator()(double kappa_rad_per_m) const noexcept {
  return std::exp(
      log_slab_shape(std::log(kappa_rad_per_m * kappa_rad_per_m + k0_rad_per_m * k0_rad_per_m),
                     std::log(0.5 * thickness_m)));
}

double hankel_structure_function(const std::function<double(double)>& spectrum,
                                 double separation_m,
                                 double low_kappa,
                                 double high_kappa) {
  if (!(separation_m > 0.0)) return 0.0;
  const double d = separation_m;
  // Below kappa_lo the spectrum is flat and 1 - J0(x) = x^2 / 4.
  const double kappa_lo = kLowFactor * std::min(low_kappa, 1.0 / d);
  const double below = kPi * spectrum(kappa_lo) * d * d * std::pow(kappa_lo, 4) / 4.0;
  const auto integrand = [&](double kappa) {
    return kappa * spectrum(kappa) * one_minus_bessel_j0(kappa * d);
  };
  // Up to one J0 period: log panels resolve the knees of the spectrum.
  const double kappa_1 = 2.0 * kPi / d;
  double sum =
      integrate_panels(integrand, log_edges(kappa_lo, kappa_1, kLogPanelsPerDecade), kPanelPoints);
  // Oscillating range: panels of half a J0 period.
  constexpr int kOscillationPanels = 100;
  std::vector<double> edges;
  edges.reserve(kOscillationPanels + 1);
  for (int i = 0; i <= kOscillationPanels; ++i) edges.push_back(kappa_1 + i * kPi / d);
  sum += integrate_panels(integrand, edges, kPanelPoints);
  // Beyond kappa_2 * d ~ 320, J0 averages out: what it would add is below 1e-5 of D even for
  // the slowest (kappa^(-8/3)) spectrum, so only the 1 of (1 - J0) is kept.
  const double kappa_2 = edges.back();
  const double kappa_end = std::max(kappa_2, high_kappa) * kHighDecades;
  sum += integrate_panels([&](double kappa) { return kappa * spectrum(kappa); },
                          log_edges(kappa_2, kappa_end, kLogPanelsPerDecade), kPanelPoints);
  return 4.0 * kPi * sum + below + power_law_tail(spectrum(kappa_end), kappa_end);
}

double hankel_saturation(const std::function<double(double)>& spectrum,
                         double low_kappa,
                         double high_kappa) {
  const double kappa_lo = kLowFactor * low_kappa;
  const double below = 2.0 * kPi * spectrum(kappa_lo) * kappa_lo * kappa_lo;
  const double kappa_end = std::max(low_kappa, high_kappa) * kHighDecades;
  const double sum =
      integrate_panels([&](double kappa) { return kappa * spectrum(kappa); },
                       log_edges(kappa_lo, kappa_end, kLogPanelsPerDecade), kPanelPoints);
  return 4.0 * kPi * sum + below + power_law_tail(spectrum(kappa_end), kappa_end);
}

}  // namespace wvr::detail::screen

namespace wvr {
namespace {

detail::screen::SlabShape shape_of(const TurbulentLayer& layer) {
  return detail::screen::SlabShape{layer.thickness_m, 2.0 * std::numbers::pi / layer.outer_scale_m};
}

// The spectrum is flat below k0 and follows kappa^(-11/3) well above max(k0, 2 / W).
double low_kappa_of(const detail::screen::SlabShape& shape) { return shape.k0_rad_per_m; }
double high_kappa_of(const detail::screen::SlabShape& shape) {
  return std::max(shape.k0_rad_per_m, 2.0 / shape.thickness_m);
}

}  // namespace

void validate_layer(const TurbulentLayer& layer) {
  require_finite("height_m", layer.height_m);
  if (layer.height_m < 0.0) {
    throw InvalidInput(describe_value("height_m", layer.height_m) + " must be >= 0 m");
  }
  require_finite("thickness_m", layer.thickness_m);
  if (!(layer.thickness_m > 0.0)) {
    throw InvalidInput(describe_value("thickness_m", layer.thickness_m) + " must be > 0 m");
  }
  require_finite("outer_scale_m", layer.outer_scale_m);
  if (!(layer.outer_scale_m > 0.0)) {
    throw InvalidInput(describe_value("outer_scale_m", layer.outer_scale_m) + " must be > 0 m");
  }
  require_finite("wind_east_m_s", layer.wind_east_m_s);
  require_finite("wind_north_m_s", layer.wind_north_m_s);
  require_finite("path_rms_at_reference_m", layer.path_rms_at_reference_m);
  if (layer.path_rms_at_reference_m < 0.0) {
    throw InvalidInput(describe_value("path_rms_at_reference_m", layer.path_rms_at_reference_m) +
                       " must be >= 0 m");
  }
  require_finite("reference_baseline_m", layer.reference_baseline_m);
  if (!(layer.reference_baseline_m > 0.0)) {
    throw InvalidInput(describe_value("reference_baseline_m", layer.reference_baseline_m) +
                       " must be > 0 m");
  }
  if (layer.kind != LayerKind::kWet && layer.kind != LayerKind::kDry) {
    throw InvalidInput(describe_value("kind", static_cast<double>(layer.kind)) +
                       " is neither wet nor dry");
  }
}

namespace detail::screen {

double slab_normalisation(const TurbulentLayer& layer) {
  const SlabShape shape = shape_of(layer);
  const double unit_d = hankel_structure_function(shape, layer.reference_baseline_m,
                                                  low_kappa_of(shape), high_kappa_of(shape));
  const double rms = layer.path_rms_at_reference_m;
  return rms * rms / unit_d;
}

}  // namespace detail::screen

LayerSpectrum::LayerSpectrum(const TurbulentLayer& layer) : layer_(layer) {
  validate_layer(layer);
  normalisation_ = detail::screen::slab_normalisation(layer);
}

double LayerSpectrum::spectrum_m4(double wavenumber_rad_per_m) const noexcept {
  if (!(wavenumber_rad_per_m >= 0.0) || !std::isfinite(wavenumber_rad_per_m)) {
    return std::numeric_limits<double>::quiet_NaN();
  }
  return normalisation_ * shape_of(layer_)(wavenumber_rad_per_m);
}

double LayerSpectrum::structure_function_m2(double separation_m) const {
  require_finite("separation_m", separation_m);
  if (separation_m < 0.0) {
    throw InvalidInput(describe_value("separation_m", separation_m) + " must be >= 0 m");
  }
  const detail::screen::SlabShape shape = shape_of(layer_);
  return normalisation_ * detail::screen::hankel_structure_function(
                              shape, separation_m, low_kappa_of(shape), high_kappa_of(shape));
}

double LayerSpectrum::saturation_m2() const {
  const detail::screen::SlabShape shape = shape_of(layer_);
  return normalisation_ *
         detail::screen::hankel_saturation(shape, low_kappa_of(shape), high_kappa_of(shape));
}

}  // namespace wvr
