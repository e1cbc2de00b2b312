#include "wvr/brightness_convention_check.hpp"

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <sstream>

#include "wvr/brightness_convention.hpp"
#include "wvr/planck.hpp"

namespace wvr {

BrightnessConventionCheck check_brightness_convention(const Night& night,
                                                      const NightRetrieval& retrieval) {
  BrightnessConventionCheck out;
  const RadiometerConfig& radiometer = night.radiometer.config;
  const std::size_t na = retrieval.antennas, nt = retrieval.samples, nw = retrieval.windows,
                    nc = retrieval.channels;
  if (na != night.antenna_count() || nt != night.time_count() || nc != night.channel_count()) {
    out.amplitude = std::nan("");
    return out;
  }
  std::vector<double> freq(nc), weight(nc);
  for (std::size_t c = 0; c < nc; ++c) {
    freq[c] = convention_frequency_ghz(radiometer.channels[c], radiometer.lo_freq_ghz);
    const double sigma = std::max(radiometer.channels[c].noise_k, 1e-3);
    weight[c] = 1.0 / (sigma * sigma);
  }
  const std::vector<double>& time = night.radiometer.time_s;
  double pattern_residual = 0.0, pattern_pattern = 0.0, residual_residual = 0.0;
  std::vector<double> sum(nc), pattern(nc), residual(nc);
  for (std::size_t a = 0; a < na; ++a) {
    std::size_t k = 0;
    for (std::size_t w = 0; w < nw; ++w) {
      const std::size_t aw = a * nw + w;
      // Observed window mean over the samples the retrieval used.
      std::fill(sum.begin(), sum.end(), 0.0);
      std::size_t count = 0;
      while (k < nt && time[k] < retrieval.window_start_s[w]) ++k;
      for (; k < nt && time[k] < retrieval.window_stop_s[w]; ++k) {
        if (retrieval.flags[a * nt + k] & kRetrievalUnusable) continue;
        const double* tb = &night.radiometer.brightness_k[(a * nt + k) * nc];
        if (!std::all_of(tb, tb + nc, [](double v) { return std::isfinite(v); })) continue;
        for (std::size_t c = 0; c < nc; ++c) sum[c] += tb[c];
        ++count;
      }
      if (count == 0 || (retrieval.window_flags[aw] & kRetrievalUnusable)) continue;
      const double* model = &retrieval.window_model_brightness_k[aw * nc];
      const double* s = &retrieval.path_sensitivity_k_per_mm[aw * nc];
      if (!std::all_of(model, model + nc, [](double v) { return std::isfinite(v); }) ||
          !std::all_of(s, s + nc, [](double v) { return std::isfinite(v); })) {
        continue;
      }
      // delta and its part the PWV fit cannot absorb.
      double s_delta = 0.0, s_s = 0.0;
      for (std::size_t c = 0; c < nc; ++c) {
        pattern[c] = planck_brightness_k(freq[c], model[c]) - model[c];
        s_delta += s[c] * weight[c] * pattern[c];
        s_s += s[c] * weight[c] * s[c];
      }
      for (std::size_t c = 0; c < nc; ++c) {
        pattern[c] -= s[c] * s_delta / s_s;
        residual[c] = sum[c] / static_cast<double>(count) - model[c];
        pattern_residual += weight[c] * pattern[c] * residual[c];
        pattern_pattern += weight[c] * pattern[c] * pattern[c];
        residual_residual += weight[c] * residual[c] * residual[c];
      }
      ++out.windows;
    }
  }
  if (out.windows == 0 || pattern_pattern <= 0.0 || residual_residual <= 0.0) {
    out.amplitude = std::nan("");
    return out;
  }
  out.amplitude = pattern_residual / pattern_pattern;
  out.explained_fraction =
      pattern_residual * pattern_residual / (pattern_pattern * residual_residual);
  out.pattern_chi2_per_window =
      out.amplitude * out.amplitude * pattern_pattern / static_cast<double>(out.windows);
  const double size = std::abs(out.amplitude);
  out.looks_like_other_convention = size >= 0.5 && size <= 1.5 && out.explained_fraction >= 0.5 &&
                                    out.pattern_chi2_per_window >= 4.0;
  if (out.looks_like_other_convention) {
    std::ostringstream text;
    text.precision(2);
    text << "brightness convention: the fit residuals look like "
         << (out.amplitude > 0 ? "Planck brightness temperatures read as Rayleigh-Jeans-equivalent "
                                 "brightness"
                               : "Rayleigh-Jeans-equivalent brightness read as Planck brightness "
                                 "temperatures")
         << " (pattern amplitude " << std::fixed << out.amplitude << ", explains "
         << std::setprecision(0) << 100.0 * out.explained_fraction
         << " % of the residual); check the night's /radiometer brightness_convention";
    out.message = text.str();
  }
  return out;
}

}  // namespace wvr
