#include "wvr/path_model_uncertainty.hpp"

#include <algorithm>
#include <cmath>

#include "wvr/absorption.hpp"

namespace wvr {

PathCoefficientComparison compare_path_coefficients(const AtmosphereProfile& profile,
                                                    const RadiometerConfig& radiometer,
                                                    double elevation_deg,
                                                    const SkyModel& model_a,
                                                    const SkyModel& model_b) {
  const ChannelBrightness a = model_a.channels(profile, radiometer, elevation_deg);
  const ChannelBrightness b = model_b.channels(profile, radiometer, elevation_deg);
  PathCoefficientComparison out;
  out.model_a = model_a.absorption_model().name();
  out.model_b = model_b.absorption_model().name();
  out.brightness_a_k = a.brightness_k;
  out.brightness_b_k = b.brightness_k;
  out.path_sensitivity_a_k_per_mm = a.path_sensitivity_k_per_mm;
  out.path_sensitivity_b_k_per_mm = b.path_sensitivity_k_per_mm;
  const std::size_t nc = a.brightness_k.size();
  double information = 0.0;
  std::vector<double> inverse_variance(nc);
  for (std::size_t c = 0; c < nc; ++c) {
    const double sigma = std::max(radiometer.channels[c].noise_k, 1e-3);
    inverse_variance[c] = 1.0 / (sigma * sigma);
    const double s = a.path_sensitivity_k_per_mm[c];
    information += s * s * inverse_variance[c];
    out.path_sensitivity_relative_difference.push_back((b.path_sensitivity_k_per_mm[c] - s) / s);
  }
  out.path_scale = 0.0;
  for (std::size_t c = 0; c < nc; ++c) {
    const double w = a.path_sensitivity_k_per_mm[c] * inverse_variance[c] / information;
    out.combination_weight_a_mm_per_k.push_back(w);
    out.path_scale += w * b.path_sensitivity_k_per_mm[c];
  }
  out.path_scale_relative_error = out.path_scale - 1.0;
  return out;
}

double path_coefficient_model_uncertainty(const SiteParameters& site,
                                          const RadiometerConfig& radiometer,
                                          double pwv_mm,
                                          double elevation_deg) {
  SiteParameters s = site;
  s.pwv_mm = pwv_mm;
  s.surface_relative_humidity_pct.reset();
  const AtmosphereProfile profile = make_parametric_profile(s);
  const PathCoefficientComparison d = compare_path_coefficients(
      profile, radiometer, elevation_deg, SkyModel(make_absorption_model("p676")),
      SkyModel(make_absorption_model("r17")));
  return std::abs(d.path_scale_relative_error);
}

}  // namespace wvr
