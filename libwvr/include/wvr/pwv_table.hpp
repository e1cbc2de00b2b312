#pragma once
// Table-based PWV inversion for real time: no iterative fit per sample.
//
// At build time the fast sky model is tabulated for every channel over PWV (log-spaced),
// airmass 1/sin(el) (uniform) and surface temperature (uniform over the site's range; each
// temperature node has its own profile and FastSkyModel). A sample is inverted by
// 1. blending the four (airmass, temperature) neighbours' brightness curves T_c(ln pwv) and
//    their slopes bilinearly;
// 2. inverting each channel's monotonic curve with its cubic Hermite segment (bisection on the
//    table, then Newton on one cubic): pwv_c;
// 3. combining the channels with inverse-variance weights w_c = (dT_c/dpwv)^2 / sigma_c^2
//    (saturated channels, whose slope vanishes, drop out by themselves);
// 4. one Gauss-Newton step of all channels at that PWV (which makes the estimate the
//    maximum-likelihood one to second order).
// The result agrees with the full fit (Retriever) to < 0.5 % in PWV and < 1 % in channel
// sensitivities over PWV 0.05-10 mm and elevation 15-90 deg (pwv_table_test).

#include <span>
#include <vector>

#include "wvr/atmosphere.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/sky_model.hpp"

namespace wvr {

struct PwvTableOptions {
  double min_pwv_mm = 0.04;  // table range; the valid domain is 0.05-10 mm inside it
  double max_pwv_mm = 11.0;
  int pwv_points = 96;
  double min_elevation_deg = 14.0;
  int airmass_points = 96;
  double min_surface_temperature_k = 255.0;
  double max_surface_temperature_k = 285.0;
  double temperature_step_k = 1.0;

  void validate() const;
};

enum class PwvTableStatus {
  kOk = 0,
  kBrightnessInvalid,  // NaN, negative or a channel count mismatch
  kElevationOutOfDomain,
  kTemperatureOutOfDomain,
  kPwvOutOfDomain,      // the estimate falls outside [min_pwv_mm, max_pwv_mm]
  kNoSensitiveChannel,  // every channel saturated or outside its curve
};

const char* to_string(PwvTableStatus status);

struct PwvTableResult {
  PwvTableStatus status = PwvTableStatus::kBrightnessInvalid;
  double pwv_mm = 0.0;
  double pwv_sigma_mm = 0.0;
  double wet_path_per_pwv_m_per_mm = 0.0;  // slant wet path per mm of zenith PWV
  double chi2 = 0.0;  // sum over channels of ((T_c - T_model,c(pwv)) / sigma_c)^2, dof = C - 1
};

class PwvTable {
 public:
  // `site` supplies the profile shape (its humidity setting is ignored); each temperature node
  // overrides surface_temperature_k. Throws InvalidInput.
  PwvTable(const SiteParameters& site,
           const RadiometerConfig& radiometer,
           const PwvTableOptions& options = {},
           const SkyModel& sky = SkyModel());

  std::size_t channel_count() const { return channels_; }
  const PwvTableOptions& options() const { return options_; }

  // Inverts one sample. `d_brightness_d_pwv_k_per_mm` (empty or channel_count() long) receives
  // each channel's slope at the estimate. Never throws, never allocates.
  PwvTableResult invert(std::span<const double> brightness_k,
                        std::span<const double> noise_k,
                        double elevation_deg,
                        double surface_temperature_k,
                        std::span<double> d_brightness_d_pwv_k_per_mm = {}) const noexcept;

 private:
  struct Blend;  // interpolation weights of one sample
  std::size_t index(std::size_t t, std::size_t a, std::size_t p, std::size_t c) const {
    return ((t * airmass_.size() + a) * log_pwv_.size() + p) * channels_ + c;
  }
  // Brightness and slope d T / d ln(pwv) of channel c at grid point p for the blend.
  void blended(
      const Blend& b, std::size_t p, std::size_t c, double& tb, double& slope) const noexcept;
  // Channel c at ln(pwv) u: brightness and d T / d ln(pwv), cubic Hermite.
  void evaluate(const Blend& b, std::size_t c, double u, double& tb, double& slope) const noexcept;

  PwvTableOptions options_;
  std::size_t channels_ = 0;
  std::vector<double> log_pwv_, airmass_, temperature_k_;
  std::vector<double> tb_k_, slope_k_;    // [temperature][airmass][pwv][channel]; slope per ln(pwv)
  std::vector<double> wet_path_per_pwv_;  // [temperature][airmass]
};

}  // namespace wvr
