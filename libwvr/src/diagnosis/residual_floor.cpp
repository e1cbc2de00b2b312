// The radiometer residual split into a systematic part, model error and what is left
// (residual_floor.hpp).

#include "diagnosis/residual_floor.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "core/statistics.hpp"

namespace wvr {

std::string RadiometerFloor::describe() const {
  std::ostringstream out;
  out.precision(3);
  out << "radiometer evidence judged against thermal noise plus model error (";
  for (std::size_t c = 0; c < model_error_k.size(); ++c) {
    out << (c ? ", " : "") << (c < channel_names.size() ? channel_names[c] : std::to_string(c))
        << " " << thermal_noise_k[c] << " + " << model_error_k[c] << " K";
  }
  double offset_rms = 0.0;
  std::size_t n = 0;
  for (double o : systematic_offset_k) {
    if (!std::isfinite(o)) continue;
    offset_rms += o * o;
    ++n;
  }
  offset_rms = n ? std::sqrt(offset_rms / static_cast<double>(n)) : std::nan("");
  double response_rms = 0.0;
  for (double v : path_response_k_per_mm) response_rms += v * v;
  response_rms = path_response_k_per_mm.empty()
                     ? 0.0
                     : std::sqrt(response_rms / static_cast<double>(path_response_k_per_mm.size()));
  out << ") after per-antenna channel offsets (rms " << offset_rms
      << " K), per-antenna channel responses to the path change (rms " << response_rms
      << " K/mm), a slow array-common part (rms " << slow_common_rms_k << " K over "
      << systematic_window_s << " s) and slow per-antenna drifts (rms " << antenna_drift_rms_k
      << " K, judged against the array's); median chi2/dof " << chi2_per_dof_thermal
      << " against thermal noise alone, " << chi2_per_dof_floor << " against the floor";
  return out.str();
}

namespace detail {
namespace {

// Median of a chi-square variable with one degree of freedom: turns a median of squares into
// a variance for Gaussian data (a robust rms that ignores the few samples of a cloud).
constexpr double kChi2OneDofMedian = 0.454936;

// Median of the finite values of v[i] for i in [lo, hi).
double median_between(const std::vector<double>& v, std::size_t lo, std::size_t hi) {
  std::vector<double> part(v.begin() + static_cast<std::ptrdiff_t>(lo),
                           v.begin() + static_cast<std::ptrdiff_t>(hi));
  return finite_median(part);
}

// Weighted median of (value, weight) pairs (0 when there are none); reorders them.
double weighted_median(std::vector<std::pair<double, double>>& values) {
  if (values.empty()) return 0.0;
  std::sort(values.begin(), values.end());
  double total = 0.0;
  for (const auto& v : values) total += v.second;
  double cumulative = 0.0;
  for (const auto& [value, weight] : values) {
    cumulative += weight;
    if (cumulative >= 0.5 * total) return value;
  }
  return values.back().first;
}

// Windows where the array's remainder (the median over antennas of the window mean less each
// unit's offset) stands out from the slow common part by more than kOutlyingSpread robust
// standard deviations (1.4826 x the median absolute deviation, over the night) in any channel:
// a cloud. On the simulated two-hour nights of the verdict tests (seeds 31-35) 5 picks the
// cloud's 14 windows of 120 and no others.
std::vector<bool> outlying_windows(const std::vector<double>& mean,
                                   const std::vector<double>& offset_k,
                                   const std::vector<double>& slow,
                                   std::size_t na,
                                   std::size_t nw,
                                   std::size_t nc) {
  constexpr double kOutlyingSpread = 5.0;
  std::vector<bool> outlying(nw, false);
  std::vector<double> deviation(nw), absolute(nw), column(na);
  for (std::size_t c = 0; c < nc; ++c) {
    for (std::size_t w = 0; w < nw; ++w) {
      for (std::size_t a = 0; a < na; ++a)
        column[a] = mean[(a * nw + w) * nc + c] - offset_k[a * nc + c];
      deviation[w] = finite_median(column) - slow[w * nc + c];
      absolute[w] = std::abs(deviation[w]);
    }
    const double spread = 1.4826 * finite_median(absolute);
    for (std::size_t w = 0; w < nw; ++w)
      if (std::abs(deviation[w]) > kOutlyingSpread * spread) outlying[w] = true;
  }
  return outlying;
}

}  // namespace

ResidualEvidence residual_evidence(const Night& night,
                                   const NightRetrieval& r,
                                   double systematic_window_s) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count(),
                    nw = r.windows;
  ResidualEvidence out;
  RadiometerFloor& floor = out.floor;
  floor.systematic_window_s = systematic_window_s;
  floor.thermal_noise_k.resize(nc);
  for (std::size_t c = 0; c < nc; ++c) {
    floor.channel_names.push_back(night.radiometer.config.channels[c].name);
    floor.thermal_noise_k[c] = night.radiometer.config.channels[c].noise_k;
  }
  floor.model_error_k.assign(nc, 0.0);
  floor.systematic_offset_k.assign(na * nc, std::nan(""));
  out.chi2_per_dof.assign(na * nt, std::nan(""));
  out.drift_chi2_per_dof.assign(na * nt, std::nan(""));
  floor.chi2_per_dof_thermal = finite_median(r.chi2_per_dof);
  if (nc < 2 || nw == 0 || r.window_model_brightness_k.size() != na * nw * nc) {
    floor.chi2_per_dof_floor = std::nan("");
    return out;
  }
  const auto& times = night.radiometer.time_s;
  std::vector<std::size_t> window_of(nt);
  for (std::size_t k = 0; k < nt; ++k) {
    const auto it = std::upper_bound(r.window_start_s.begin(), r.window_start_s.end(), times[k]);
    window_of[k] = it == r.window_start_s.begin()
                       ? 0
                       : static_cast<std::size_t>(it - r.window_start_s.begin()) - 1;
  }
  // A window whose fit failed (a thick cloud can do that) borrows the model of the antenna's
  // nearest usable window: its samples are still evidence.
  std::vector<std::size_t> reference(na * nw, nw);
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t w = 0; w < nw; ++w) {
      for (std::size_t step = 0; step < nw && reference[a * nw + w] == nw; ++step) {
        for (const std::size_t v : {w - step, w + step}) {
          if (v < nw && !(r.window_flags[a * nw + v] & kRetrievalUnusable)) {
            reference[a * nw + w] = v;
            break;
          }
        }
      }
    }
  }
  // Residual of sample k of antenna a: the brightness change from the window's model with the
  // part a path change explains taken out, r = d - s (w . d). False where unusable.
  std::vector<double> residual(nc);
  double path_change_mm = 0.0;  // of the last residual_at
  auto residual_at = [&](std::size_t a, std::size_t k) {
    if (r.flags[a * nt + k] & kRetrievalUnusable) return false;
    const std::size_t own = reference[a * nw + window_of[k]];
    if (own == nw) return false;
    const std::size_t aw = a * nw + own;
    double path_mm = 0.0;
    for (std::size_t c = 0; c < nc; ++c) {
      residual[c] = night.radiometer.brightness_k[(a * nt + k) * nc + c] -
                    r.window_model_brightness_k[aw * nc + c];
      path_mm += r.combination_weight_mm_per_k[aw * nc + c] * residual[c];
    }
    for (std::size_t c = 0; c < nc; ++c)
      residual[c] -= r.path_sensitivity_k_per_mm[aw * nc + c] * path_mm;
    path_change_mm = path_mm;
    return std::all_of(residual.begin(), residual.end(), [](double v) { return std::isfinite(v); });
  };
  // Window means [antenna, window, channel].
  std::vector<double> mean(na * nw * nc, 0.0);
  std::vector<std::size_t> count(na * nw, 0);
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t k = 0; k < nt; ++k) {
      if (!residual_at(a, k)) continue;
      const std::size_t aw = a * nw + window_of[k];
      for (std::size_t c = 0; c < nc; ++c) mean[aw * nc + c] += residual[c];
      ++count[aw];
    }
  }
  for (std::size_t aw = 0; aw < na * nw; ++aw) {
    for (std::size_t c = 0; c < nc; ++c) {
      mean[aw * nc + c] =
          count[aw] ? mean[aw * nc + c] / static_cast<double>(count[aw]) : std::nan("");
    }
  }
  // Offsets per antenna and channel, then the slow common part of what they leave; twice, so
  // that each is estimated without the other.
  std::vector<double> slow(nw * nc, 0.0);
  std::vector<double> series(nw), common_column(na);
  for (int pass = 0; pass < 2; ++pass) {
    for (std::size_t a = 0; a < na; ++a) {
      for (std::size_t c = 0; c < nc; ++c) {
        for (std::size_t w = 0; w < nw; ++w)
          series[w] = mean[(a * nw + w) * nc + c] - slow[w * nc + c];
        floor.systematic_offset_k[a * nc + c] = finite_median(series);
      }
    }
    for (std::size_t c = 0; c < nc; ++c) {
      std::vector<double> common(nw);
      for (std::size_t w = 0; w < nw; ++w) {
        for (std::size_t a = 0; a < na; ++a)
          common_column[a] = mean[(a * nw + w) * nc + c] - floor.systematic_offset_k[a * nc + c];
        common[w] = finite_median(common_column);
      }
      std::size_t lo = 0, hi = 0;
      for (std::size_t w = 0; w < nw; ++w) {
        const double centre = 0.5 * (r.window_start_s[w] + r.window_stop_s[w]);
        while (lo < nw && r.window_stop_s[lo] < centre - 0.5 * systematic_window_s) ++lo;
        while (hi < nw && r.window_start_s[hi] <= centre + 0.5 * systematic_window_s) ++hi;
        const double m = median_between(common, lo, hi);
        slow[w * nc + c] = std::isfinite(m) ? m : 0.0;
      }
    }
  }
  double slow_sum = 0.0;
  for (double v : slow) slow_sum += v * v;
  floor.slow_common_rms_k = std::sqrt(slow_sum / static_cast<double>(slow.size()));
  // Per antenna and channel, the remainder's response to the path change: a unit whose
  // channel gains differ by g_c reads a path change dL as (1 + g_c) s_c dL, of which the
  // projection leaves s_c (g_c - g_mean) dL, a residual that follows the turbulence. Its slope
  // against the path change is fitted per window and its median over the night kept, weighted
  // by the window's path variance (a slope of a quiet window is mostly noise) but no window more
  // than the median variance (a cloud's liquid reads as a large path change whose residual
  // follows it; clouds and faults in fewer than half the windows then do not move the median).
  floor.path_response_k_per_mm.assign(na * nc, 0.0);
  {
    std::vector<double> sum_rp(nw * nc), sum_pp(nw);
    std::vector<std::pair<double, double>> slopes;  // (slope, weight)
    for (std::size_t a = 0; a < na; ++a) {
      std::fill(sum_rp.begin(), sum_rp.end(), 0.0);
      std::fill(sum_pp.begin(), sum_pp.end(), 0.0);
      for (std::size_t k = 0; k < nt; ++k) {
        if (!residual_at(a, k)) continue;
        const std::size_t w = window_of[k];
        for (std::size_t c = 0; c < nc; ++c) {
          const double rest =
              residual[c] - floor.systematic_offset_k[a * nc + c] - slow[w * nc + c];
          sum_rp[w * nc + c] += rest * path_change_mm;
        }
        sum_pp[w] += path_change_mm * path_change_mm;
      }
      const double weight_cap = finite_median(sum_pp);
      for (std::size_t c = 0; c < nc; ++c) {
        slopes.clear();
        for (std::size_t w = 0; w < nw; ++w) {
          if (sum_pp[w] > 0.0 && std::isfinite(sum_rp[w * nc + c]))
            slopes.emplace_back(sum_rp[w * nc + c] / sum_pp[w], std::min(sum_pp[w], weight_cap));
        }
        floor.path_response_k_per_mm[a * nc + c] = weighted_median(slopes);
      }
    }
  }
  // Model error: the robust rms of the per-sample remainder less its thermal part. The
  // projection's thermal variance of channel c is sigma_c^2 (1 - 2 s_c w_c) + s_c^2 sum w^2
  // sigma^2; its median over the night stands for all samples.
  auto remainder_at = [&](std::size_t a, std::size_t k) {
    if (!residual_at(a, k)) return false;
    for (std::size_t c = 0; c < nc; ++c) {
      residual[c] -= floor.systematic_offset_k[a * nc + c] + slow[window_of[k] * nc + c] +
                     floor.path_response_k_per_mm[a * nc + c] * path_change_mm;
    }
    return std::all_of(residual.begin(), residual.end(), [](double v) { return std::isfinite(v); });
  };
  // Per antenna: units differ (a gain error makes the residual follow the sky's changes).
  floor.antenna_model_error_k.assign(na * nc, 0.0);
  std::vector<double> variance(na * nc);
  for (std::size_t a = 0; a < na; ++a) {
    std::vector<std::vector<double>> squares(nc), thermal(nc);
    for (std::size_t k = 0; k < nt; ++k) {
      if (!remainder_at(a, k)) continue;
      const std::size_t aw = a * nw + reference[a * nw + window_of[k]];
      double projected = 0.0;
      for (std::size_t c = 0; c < nc; ++c) {
        const double wc = r.combination_weight_mm_per_k[aw * nc + c];
        projected += wc * wc * floor.thermal_noise_k[c] * floor.thermal_noise_k[c];
      }
      for (std::size_t c = 0; c < nc; ++c) {
        const double s = r.path_sensitivity_k_per_mm[aw * nc + c];
        const double wc = r.combination_weight_mm_per_k[aw * nc + c];
        const double sigma2 = floor.thermal_noise_k[c] * floor.thermal_noise_k[c];
        squares[c].push_back(residual[c] * residual[c]);
        thermal[c].push_back(sigma2 * (1.0 - 2.0 * s * wc) + s * s * projected);
      }
    }
    for (std::size_t c = 0; c < nc; ++c) {
      const double total = finite_median(squares[c]) / kChi2OneDofMedian;
      const double excess = total - finite_median(thermal[c]);
      const double model_error = std::isfinite(excess) && excess > 0.0 ? std::sqrt(excess) : 0.0;
      floor.antenna_model_error_k[a * nc + c] = model_error;
      variance[a * nc + c] =
          floor.thermal_noise_k[c] * floor.thermal_noise_k[c] + model_error * model_error;
    }
  }
  std::vector<double> column(na);
  for (std::size_t c = 0; c < nc; ++c) {
    for (std::size_t a = 0; a < na; ++a) column[a] = floor.antenna_model_error_k[a * nc + c];
    floor.model_error_k[c] = finite_median(column);
  }
  // Per antenna and channel, the slow drift of what is left (a unit's calibration drifting over
  // the night; left in, it flagged healthy units at the night's ends): the running median over
  // systematic_window_s of its window means after the offset and the common slow part. Windows
  // where the array's remainder stands out are left out of that median (a cloud raises every
  // unit's remainder, each by its own amount; lying on one side of a window, it moved the median
  // and flagged units next to it). The drift is taken out of the evidence but not of the model
  // error above (estimated from the same remainder, the floor would shrink by the drift and every
  // unit's short excursions would stand out more), and is judged on its own against the array's
  // (drift_chi2_per_dof): a unit that drifts far more than the others is still a fault.
  std::vector<double> drift(na * nw * nc, 0.0);
  {
    const std::vector<bool> outlying =
        outlying_windows(mean, floor.systematic_offset_k, slow, na, nw, nc);
    std::vector<double> rest(nw);
    double drift_sum = 0.0;
    for (std::size_t a = 0; a < na; ++a) {
      for (std::size_t c = 0; c < nc; ++c) {
        for (std::size_t w = 0; w < nw; ++w) {
          rest[w] = outlying[w] ? std::nan("")
                                : mean[(a * nw + w) * nc + c] -
                                      floor.systematic_offset_k[a * nc + c] - slow[w * nc + c];
        }
        std::size_t lo = 0, hi = 0;
        for (std::size_t w = 0; w < nw; ++w) {
          const double centre = 0.5 * (r.window_start_s[w] + r.window_stop_s[w]);
          while (lo < nw && r.window_stop_s[lo] < centre - 0.5 * systematic_window_s) ++lo;
          while (hi < nw && r.window_start_s[hi] <= centre + 0.5 * systematic_window_s) ++hi;
          const double m = median_between(rest, lo, hi);
          double& d = drift[(a * nw + w) * nc + c];
          d = std::isfinite(m) ? m : 0.0;
          drift_sum += d * d;
        }
      }
    }
    floor.antenna_drift_rms_k = std::sqrt(drift_sum / static_cast<double>(drift.size()));
  }
  const double dof = static_cast<double>(nc - 1);
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t k = 0; k < nt; ++k) {
      if (!remainder_at(a, k)) continue;
      double chi2 = 0.0, drift_chi2 = 0.0;
      for (std::size_t c = 0; c < nc; ++c) {
        const double d = drift[(a * nw + window_of[k]) * nc + c];
        chi2 += (residual[c] - d) * (residual[c] - d) / variance[a * nc + c];
        drift_chi2 += d * d / variance[a * nc + c];
      }
      out.chi2_per_dof[a * nt + k] = chi2 / dof;
      out.drift_chi2_per_dof[a * nt + k] = drift_chi2 / dof;
    }
  }
  floor.chi2_per_dof_floor = finite_median(out.chi2_per_dof);
  return out;
}

}  // namespace detail
}  // namespace wvr
