#include "wvr/pwv_table.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "wvr/error.hpp"
#include "wvr/fast_sky_model.hpp"

namespace wvr {

void PwvTableOptions::validate() const {
  require_in_range("min_pwv_mm", min_pwv_mm, 1e-3, 10.0, "mm");
  require_in_range("max_pwv_mm", max_pwv_mm, min_pwv_mm * 2.0, 50.0, "mm");
  if (pwv_points < 8 || pwv_points > 4096)
    throw InvalidInput("pwv_points = " + std::to_string(pwv_points) + " is outside [8, 4096]");
  require_in_range("min_elevation_deg", min_elevation_deg, 5.0, 80.0, "deg");
  if (airmass_points < 2 || airmass_points > 1024) {
    throw InvalidInput("airmass_points = " + std::to_string(airmass_points) +
                       " is outside [2, 1024]");
  }
  require_in_range("min_surface_temperature_k", min_surface_temperature_k, 180.0, 330.0, "K");
  require_in_range("max_surface_temperature_k", max_surface_temperature_k,
                   min_surface_temperature_k, 330.0, "K");
  require_in_range("temperature_step_k", temperature_step_k, 0.1, 100.0, "K");
}

const char* to_string(PwvTableStatus status) {
  switch (status) {
    case PwvTableStatus::kOk:
      return "ok";
    case PwvTableStatus::kBrightnessInvalid:
      return "brightness invalid";
    case PwvTableStatus::kElevationOutOfDomain:
      return "elevation outside the table";
    case PwvTableStatus::kTemperatureOutOfDomain:
      return "surface temperature outside the table";
    case PwvTableStatus::kPwvOutOfDomain:
      return "pwv outside the table";
    case PwvTableStatus::kNoSensitiveChannel:
      return "no channel is sensitive to pwv here";
  }
  return "unknown";
}

struct PwvTable::Blend {
  std::size_t t0 = 0, t1 = 0, a0 = 0, a1 = 0;
  double w00 = 0, w01 = 0, w10 = 0, w11 = 0;  // weights of (t0,a0), (t0,a1), (t1,a0), (t1,a1)
};

namespace {

// Index and fraction of x on a uniform grid (clamped to the last interval).
void locate(
    const std::vector<double>& grid, double x, std::size_t& i0, std::size_t& i1, double& f) {
  if (grid.size() == 1) {
    i0 = i1 = 0;
    f = 0.0;
    return;
  }
  const double step = grid[1] - grid[0];
  const double position =
      std::clamp((x - grid[0]) / step, 0.0, static_cast<double>(grid.size() - 1));
  i0 = std::min(static_cast<std::size_t>(position), grid.size() - 2);
  i1 = i0 + 1;
  f = position - static_cast<double>(i0);
}

}  // namespace

PwvTable::PwvTable(const SiteParameters& site,
                   const RadiometerConfig& radiometer,
                   const PwvTableOptions& options,
                   const SkyModel& sky)
    : options_(options) {
  options_.validate();
  radiometer.validate();
  if (options_.min_elevation_deg < sky.options().min_elevation_deg) {
    throw InvalidInput(describe_value("min_elevation_deg", options_.min_elevation_deg) +
                       " is below the sky model's minimum elevation");
  }
  channels_ = radiometer.channels.size();
  const std::size_t np = static_cast<std::size_t>(options_.pwv_points);
  const double lo = std::log(options_.min_pwv_mm), hi = std::log(options_.max_pwv_mm);
  for (std::size_t p = 0; p < np; ++p)
    log_pwv_.push_back(lo + (hi - lo) * static_cast<double>(p) / static_cast<double>(np - 1));
  const double max_airmass = 1.0 / std::sin(options_.min_elevation_deg * std::numbers::pi / 180.0);
  const std::size_t na = static_cast<std::size_t>(options_.airmass_points);
  for (std::size_t a = 0; a < na; ++a)
    airmass_.push_back(1.0 +
                       (max_airmass - 1.0) * static_cast<double>(a) / static_cast<double>(na - 1));
  for (double t = options_.min_surface_temperature_k;
       t <= options_.max_surface_temperature_k + 1e-9; t += options_.temperature_step_k) {
    temperature_k_.push_back(t);
  }
  if (temperature_k_.back() < options_.max_surface_temperature_k - 1e-9) {
    temperature_k_.push_back(temperature_k_.back() + options_.temperature_step_k);
  }
  tb_k_.resize(temperature_k_.size() * na * np * channels_);
  slope_k_.resize(tb_k_.size());
  wet_path_per_pwv_.resize(temperature_k_.size() * na);
  FastSkyModelOptions fast_options;
  fast_options.max_pwv_mm = std::max(fast_options.max_pwv_mm, options_.max_pwv_mm * 1.01);
  std::vector<double> tb(channels_), d_pwv(channels_);
  for (std::size_t t = 0; t < temperature_k_.size(); ++t) {
    SiteParameters s = site;
    s.surface_temperature_k = temperature_k_[t];
    s.pwv_mm = 1.0;
    s.surface_relative_humidity_pct.reset();
    const FastSkyModel fast(make_parametric_profile(s), radiometer, sky, fast_options);
    auto ws = fast.make_workspace();
    for (std::size_t a = 0; a < na; ++a) {
      const double el = std::asin(1.0 / airmass_[a]) * 180.0 / std::numbers::pi;
      wet_path_per_pwv_[t * na + a] = fast.wet_path_per_pwv_m_per_mm(el);
      for (std::size_t p = 0; p < np; ++p) {
        const double pwv = std::exp(log_pwv_[p]);
        fast.evaluate(pwv, el, ws, tb, d_pwv);
        for (std::size_t c = 0; c < channels_; ++c) {
          tb_k_[index(t, a, p, c)] = tb[c];
          slope_k_[index(t, a, p, c)] = d_pwv[c] * pwv;  // d T / d ln(pwv)
        }
      }
    }
  }
}

void PwvTable::blended(
    const Blend& b, std::size_t p, std::size_t c, double& tb, double& slope) const noexcept {
  const std::size_t i00 = index(b.t0, b.a0, p, c), i01 = index(b.t0, b.a1, p, c);
  const std::size_t i10 = index(b.t1, b.a0, p, c), i11 = index(b.t1, b.a1, p, c);
  tb = b.w00 * tb_k_[i00] + b.w01 * tb_k_[i01] + b.w10 * tb_k_[i10] + b.w11 * tb_k_[i11];
  slope =
      b.w00 * slope_k_[i00] + b.w01 * slope_k_[i01] + b.w10 * slope_k_[i10] + b.w11 * slope_k_[i11];
}

void PwvTable::evaluate(
    const Blend& b, std::size_t c, double u, double& tb, double& slope) const noexcept {
  const double step = log_pwv_[1] - log_pwv_[0];
  const double position =
      std::clamp((u - log_pwv_[0]) / step, 0.0, static_cast<double>(log_pwv_.size() - 1));
  const std::size_t p = std::min(static_cast<std::size_t>(position), log_pwv_.size() - 2);
  const double s = position - static_cast<double>(p);
  double y0, m0, y1, m1;
  blended(b, p, c, y0, m0);
  blended(b, p + 1, c, y1, m1);
  // Cubic Hermite basis on [0, 1] with slopes scaled by the step.
  const double s2 = s * s, s3 = s2 * s;
  tb = (2 * s3 - 3 * s2 + 1) * y0 + (s3 - 2 * s2 + s) * step * m0 + (-2 * s3 + 3 * s2) * y1 +
       (s3 - s2) * step * m1;
  slope = ((6 * s2 - 6 * s) * y0 + (3 * s2 - 4 * s + 1) * step * m0 + (-6 * s2 + 6 * s) * y1 +
           (3 * s2 - 2 * s) * step * m1) /
          step;
}

PwvTableResult PwvTable::invert(std::span<const double> brightness_k,
                                std::span<const double> noise_k,
                                double elevation_deg,
                                double surface_temperature_k,
                                std::span<double> d_brightness_d_pwv_k_per_mm) const noexcept {
  PwvTableResult result;
  if (brightness_k.size() != channels_ || noise_k.size() != channels_ ||
      (!d_brightness_d_pwv_k_per_mm.empty() && d_brightness_d_pwv_k_per_mm.size() != channels_)) {
    return result;
  }
  for (std::size_t c = 0; c < channels_; ++c) {
    if (!(brightness_k[c] >= 0.0 && brightness_k[c] < 400.0) || !(noise_k[c] > 0.0)) return result;
  }
  if (!(elevation_deg >= options_.min_elevation_deg && elevation_deg <= 90.0)) {
    result.status = PwvTableStatus::kElevationOutOfDomain;
    return result;
  }
  if (!(surface_temperature_k >= temperature_k_.front() - 1e-9 &&
        surface_temperature_k <= temperature_k_.back() + 1e-9)) {
    result.status = PwvTableStatus::kTemperatureOutOfDomain;
    return result;
  }
  Blend b;
  double fa = 0.0, ft = 0.0;
  locate(airmass_, 1.0 / std::sin(elevation_deg * std::numbers::pi / 180.0), b.a0, b.a1, fa);
  locate(temperature_k_, surface_temperature_k, b.t0, b.t1, ft);
  b.w00 = (1 - ft) * (1 - fa);
  b.w01 = (1 - ft) * fa;
  b.w10 = ft * (1 - fa);
  b.w11 = ft * fa;
  const std::size_t na = airmass_.size();
  result.wet_path_per_pwv_m_per_mm =
      b.w00 * wet_path_per_pwv_[b.t0 * na + b.a0] + b.w01 * wet_path_per_pwv_[b.t0 * na + b.a1] +
      b.w10 * wet_path_per_pwv_[b.t1 * na + b.a0] + b.w11 * wet_path_per_pwv_[b.t1 * na + b.a1];

  // Per-channel inversion.
  const std::size_t np = log_pwv_.size();
  double sum_w = 0.0, sum_wu = 0.0;
  for (std::size_t c = 0; c < channels_; ++c) {
    const double target = brightness_k[c];
    double t_lo, m_lo, t_hi, m_hi;
    blended(b, 0, c, t_lo, m_lo);
    blended(b, np - 1, c, t_hi, m_hi);
    if (!(target > t_lo && target < t_hi)) continue;
    std::size_t lo = 0, hi = np - 1;
    while (hi - lo > 1) {
      const std::size_t mid = (lo + hi) / 2;
      double t_mid, m_mid;
      blended(b, mid, c, t_mid, m_mid);
      (t_mid < target ? lo : hi) = mid;
    }
    double y0, m0, y1, m1;
    blended(b, lo, c, y0, m0);
    blended(b, hi, c, y1, m1);
    double u = log_pwv_[lo] + (log_pwv_[hi] - log_pwv_[lo]) * (target - y0) / (y1 - y0);
    double tb = 0.0, slope = 0.0;
    for (int iteration = 0; iteration < 6; ++iteration) {
      evaluate(b, c, u, tb, slope);
      if (!(slope > 0.0)) break;
      const double du = (target - tb) / slope;
      u = std::clamp(u + du, log_pwv_[lo], log_pwv_[hi]);
      if (std::abs(du) < 1e-13) break;
    }
    evaluate(b, c, u, tb, slope);
    const double pwv = std::exp(u);
    const double slope_per_mm = slope / pwv;
    const double w = slope_per_mm * slope_per_mm / (noise_k[c] * noise_k[c]);
    sum_w += w;
    sum_wu += w * pwv;
  }
  if (!(sum_w > 0.0)) {
    // Every channel outside its curve: below the coldest or above the brightest PWV.
    double t_lo, m_lo;
    blended(b, 0, channels_ - 1, t_lo, m_lo);
    result.status = brightness_k[channels_ - 1] <= t_lo ? PwvTableStatus::kPwvOutOfDomain
                                                        : PwvTableStatus::kNoSensitiveChannel;
    double t_hi, m_hi;
    blended(b, np - 1, 0, t_hi, m_hi);
    if (brightness_k[0] >= t_hi) result.status = PwvTableStatus::kPwvOutOfDomain;
    return result;
  }
  // One Gauss-Newton step of all channels from the combined estimate.
  double pwv = sum_wu / sum_w;
  double info = 0.0, score = 0.0;
  for (std::size_t c = 0; c < channels_; ++c) {
    double tb, slope;
    evaluate(b, c, std::log(pwv), tb, slope);
    const double s = slope / pwv;
    const double inv_var = 1.0 / (noise_k[c] * noise_k[c]);
    info += s * s * inv_var;
    score += s * (brightness_k[c] - tb) * inv_var;
  }
  pwv += score / info;
  if (!(pwv >= options_.min_pwv_mm && pwv <= options_.max_pwv_mm)) {
    result.status = PwvTableStatus::kPwvOutOfDomain;
    result.pwv_mm = pwv;
    return result;
  }
  info = 0.0;
  double chi2 = 0.0;
  for (std::size_t c = 0; c < channels_; ++c) {
    double tb, slope;
    evaluate(b, c, std::log(pwv), tb, slope);
    const double s = slope / pwv;
    if (!d_brightness_d_pwv_k_per_mm.empty()) d_brightness_d_pwv_k_per_mm[c] = s;
    info += s * s / (noise_k[c] * noise_k[c]);
    const double r = (brightness_k[c] - tb) / noise_k[c];
    chi2 += r * r;
  }
  result.chi2 = chi2;
  result.status = PwvTableStatus::kOk;
  result.pwv_mm = pwv;
  result.pwv_sigma_mm = 1.0 / std::sqrt(info);
  return result;
}

}  // namespace wvr
