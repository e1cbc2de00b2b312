#pragma once
// Does a retrieved night look as if its brightness was in the other convention?
//
// Planck brightness temperatures read as Rayleigh-Jeans-equivalent brightness (or the reverse)
// add to every channel delta_c = T_Planck(nu_c, J_c) - J_c (about h nu / 2k, 4.4 K at
// 183 GHz; wvr/brightness_convention.hpp). The window fit absorbs the part of delta along its
// PWV Jacobian (PWV shifts by a few per cent) and leaves the rest, p = delta - s (s' W delta)
// / (s' W s) with s the path sensitivities and W = 1 / noise^2, in the residual. This check
// fits the window residuals (observed window mean minus the model at the fitted state) with
// a * p over every usable window: a near +1 means Planck values labelled Rayleigh-Jeans-
// equivalent, near -1 the reverse; the pattern must also explain most of the residual.

#include <string>

#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr {

struct BrightnessConventionCheck {
  std::size_t windows = 0;  // usable antenna windows in the fit
  // Least-squares amplitude of the pattern in the residuals (NaN without usable windows).
  double amplitude = 0.0;
  // Share of the noise-weighted residual sum of squares the pattern explains, [0, 1].
  double explained_fraction = 0.0;
  // Chi-square per window the pattern accounts for (a^2 p' W p / windows).
  double pattern_chi2_per_window = 0.0;
  bool looks_like_other_convention = false;
  std::string message;  // empty unless looks_like_other_convention
};

// Thresholds (common practice for a two-way decision, not tuned to a survey): |a| within
// [0.5, 1.5], explained_fraction >= 0.5 and pattern_chi2_per_window >= 4.
BrightnessConventionCheck check_brightness_convention(const Night& night,
                                                      const NightRetrieval& retrieval);

}  // namespace wvr
