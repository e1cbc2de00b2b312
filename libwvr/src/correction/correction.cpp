#include "wvr/correction.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <map>
#include <numbers>

#include "core/phase_wrap.hpp"
#include "core/statistics.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr double kDeg = 180.0 / std::numbers::pi;

template <typename T>
const std::vector<T>& dataset(const ResultGroup& group,
                              const std::string& name,
                              std::vector<std::size_t> shape) {
  const ResultDataset* d = group.find(name);
  if (d == nullptr) throw InvalidInput("/results/" + group.stage + "/" + name + " is missing");
  if (d->shape != shape)
    throw InvalidInput("/results/" + group.stage + "/" + name + " has an unexpected shape");
  const auto* values = std::get_if<std::vector<T>>(&d->values);
  if (values == nullptr)
    throw InvalidInput("/results/" + group.stage + "/" + name + " has an unexpected type");
  return *values;
}

double k_rad_per_mm(double freq_ghz) {
  return kTwoPi * freq_ghz * 1e9 / constants::speed_of_light_m_per_s * 1e-3;
}

}  // namespace

CoefficientWindows CoefficientWindows::from_retrieval(const NightRetrieval& r) {
  CoefficientWindows c;
  c.antennas = r.antennas;
  c.channels = r.channels;
  c.windows = r.windows;
  c.start_s = r.window_start_s;
  c.stop_s = r.window_stop_s;
  c.weight_mm_per_k = r.combination_weight_mm_per_k;
  c.reference_brightness_k = r.window_model_brightness_k;
  c.reference_path_mm = r.window_wet_path_mm;
  c.usable.resize(r.antennas * r.windows);
  for (std::size_t i = 0; i < c.usable.size(); ++i)
    c.usable[i] = (r.window_flags[i] & kRetrievalUnusable) == 0;
  return c;
}

CoefficientWindows CoefficientWindows::from_result_group(const ResultGroup& g) {
  const ResultDataset* start = g.find("window_start_s");
  const ResultDataset* weights = g.find("combination_weight_mm_per_k");
  if (start == nullptr || weights == nullptr || weights->shape.size() != 3) {
    throw InvalidInput("/results/" + g.stage +
                       " has no coefficient windows (window_start_s, combination_weight_mm_per_k)");
  }
  CoefficientWindows c;
  c.antennas = weights->shape[0];
  c.windows = weights->shape[1];
  c.channels = weights->shape[2];
  const std::size_t a = c.antennas, w = c.windows, ch = c.channels;
  c.start_s = dataset<double>(g, "window_start_s", {w});
  c.stop_s = dataset<double>(g, "window_stop_s", {w});
  c.weight_mm_per_k = dataset<double>(g, "combination_weight_mm_per_k", {a, w, ch});
  c.reference_brightness_k = dataset<double>(g, "window_model_brightness_k", {a, w, ch});
  c.reference_path_mm = dataset<double>(g, "window_wet_path_mm", {a, w});
  const std::vector<std::uint8_t>& flags = dataset<std::uint8_t>(g, "window_flags", {a, w});
  c.usable.resize(a * w);
  for (std::size_t i = 0; i < c.usable.size(); ++i)
    c.usable[i] = (flags[i] & kRetrievalUnusable) == 0;
  return c;
}

std::size_t CoefficientWindows::window_at(double time_s) const {
  auto it = std::upper_bound(start_s.begin(), start_s.end(), time_s);
  if (it == start_s.begin()) return 0;
  return static_cast<std::size_t>(it - start_s.begin()) - 1;
}

CorrectorCoefficients CoefficientWindows::corrector_coefficients(
    std::size_t w, std::span<const double> antenna_scale) const {
  CorrectorCoefficients k;
  k.weight_mm_per_k.resize(antennas * channels);
  k.reference_brightness_k.resize(antennas * channels);
  k.reference_path_mm.resize(antennas);
  k.scale.resize(antennas);
  k.usable.resize(antennas);
  for (std::size_t a = 0; a < antennas; ++a) {
    const std::size_t aw = a * windows + w;
    bool ok = usable[aw] != 0 && std::isfinite(reference_path_mm[aw]);
    for (std::size_t c = 0; c < channels; ++c) {
      const double weight = weight_mm_per_k[aw * channels + c];
      const double reference = reference_brightness_k[aw * channels + c];
      ok = ok && std::isfinite(weight) && std::isfinite(reference);
      k.weight_mm_per_k[a * channels + c] = std::isfinite(weight) ? weight : 0.0;
      k.reference_brightness_k[a * channels + c] = std::isfinite(reference) ? reference : 0.0;
    }
    k.reference_path_mm[a] = ok ? reference_path_mm[aw] : 0.0;
    k.scale[a] = antenna_scale.empty() ? 1.0 : antenna_scale[a];
    k.usable[a] = ok ? 1 : 0;
  }
  return k;
}

PhaseCorrections compute_phase_corrections(const Night& night,
                                           const CoefficientWindows& coefficients,
                                           std::span<const double> antenna_scale,
                                           double obs_freq_ghz,
                                           double phase_per_path) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  if (coefficients.antennas != na || coefficients.channels != nc) {
    throw InvalidInput("coefficients for " + std::to_string(coefficients.antennas) +
                       " antennas x " + std::to_string(coefficients.channels) +
                       " channels do not match the night");
  }
  if (!antenna_scale.empty() && antenna_scale.size() != na) {
    throw InvalidInput("antenna_scale has " + std::to_string(antenna_scale.size()) +
                       " values for " + std::to_string(na) + " antennas");
  }
  CorrectorConfig config;
  config.antennas = na;
  config.channels = nc;
  config.obs_freq_ghz = obs_freq_ghz;
  config.phase_per_path = phase_per_path;
  std::size_t window = coefficients.window_at(night.radiometer.time_s.front());
  StreamingCorrector corrector(config, coefficients.corrector_coefficients(window, antenna_scale));
  PhaseCorrections out;
  out.obs_freq_ghz = obs_freq_ghz;
  out.phase_per_path = phase_per_path;
  out.antenna_scale.assign(antenna_scale.begin(), antenna_scale.end());
  if (out.antenna_scale.empty()) out.antenna_scale.assign(na, 1.0);
  out.time_s = night.radiometer.time_s;
  out.phase_correction_rad.resize(na * nt);
  out.path_mm.resize(na * nt);
  out.flags.resize(na * nt);
  out.path_predicted.assign(na * nt, 0);
  out.predicted_expected_residual_mm.assign(na, std::nan(""));
  std::vector<double> brightness(na * nc), path(na), phase(na);
  std::vector<std::uint8_t> valid(na), flags(na);
  for (std::size_t k = 0; k < nt; ++k) {
    const std::size_t w = coefficients.window_at(night.radiometer.time_s[k]);
    if (w != window) {
      window = w;
      corrector.update_coefficients(coefficients.corrector_coefficients(window, antenna_scale));
    }
    for (std::size_t a = 0; a < na; ++a) {
      valid[a] = night.radiometer.valid[a * nt + k];
      for (std::size_t c = 0; c < nc; ++c)
        brightness[a * nc + c] = night.radiometer.brightness_k[(a * nt + k) * nc + c];
    }
    corrector.process(brightness, valid, path, phase, flags);
    for (std::size_t a = 0; a < na; ++a) {
      out.path_mm[a * nt + k] = path[a];
      out.phase_correction_rad[a * nt + k] = phase[a];
      out.flags[a * nt + k] = flags[a];
    }
  }
  return out;
}

AntennaPaths compute_wvr_paths(const Night& night, const CoefficientWindows& coefficients) {
  const PhaseCorrections unit = compute_phase_corrections(night, coefficients, {}, 100.0, 1.0);
  AntennaPaths paths;
  paths.antennas = night.antenna_count();
  paths.time_s = unit.time_s;
  paths.path_mm = unit.path_mm;
  paths.flags = unit.flags;
  return paths;
}

std::vector<double> interpolate_corrections(const PhaseCorrections& c,
                                            std::span<const double> time_s) {
  const std::size_t nt = c.time_s.size();
  const std::size_t na = nt == 0 ? 0 : c.phase_correction_rad.size() / nt;
  std::vector<double> out(na * time_s.size(), std::nan(""));
  for (std::size_t i = 0; i < time_s.size(); ++i) {
    const double t = time_s[i];
    auto it = std::lower_bound(c.time_s.begin(), c.time_s.end(), t);
    if (it == c.time_s.end() || !std::isfinite(t)) continue;
    const std::size_t j = static_cast<std::size_t>(it - c.time_s.begin());
    for (std::size_t a = 0; a < na; ++a) {
      if (*it == t) {
        if (c.flags[a * nt + j] == 0)
          out[a * time_s.size() + i] = c.phase_correction_rad[a * nt + j];
        continue;
      }
      if (j == 0 || c.flags[a * nt + j] != 0 || c.flags[a * nt + j - 1] != 0) continue;
      const double f = (t - c.time_s[j - 1]) / (c.time_s[j] - c.time_s[j - 1]);
      out[a * time_s.size() + i] =
          (1 - f) * c.phase_correction_rad[a * nt + j - 1] + f * c.phase_correction_rad[a * nt + j];
    }
  }
  return out;
}

CorrectionMetrics evaluate_correction(const Night& night,
                                      const AntennaPaths& paths,
                                      std::span<const double> antenna_scale,
                                      const PhasePerPath& phase_per_path) {
  const std::size_t na = night.antenna_count();
  const std::size_t nt = paths.time_s.size();
  const CalibratorPhases& cp = night.calibrator_phases;
  CorrectionMetrics m;
  m.corrected_phase_rad.assign(cp.time_s.size(), std::nan(""));
  std::map<double, double> k_cache;
  // Rows of each (baseline as stored, calibrator scan) for circular means: a counting sort by
  // baseline keeps each baseline's rows in time order (a map of groups cost more than the
  // statistics on nights with every baseline: 11.6 million rows on 64 antennas x 8 h).
  constexpr std::uint32_t kUnused = UINT32_MAX;
  std::vector<std::uint32_t> row_pair(cp.time_s.size(), kUnused), row_scan(cp.time_s.size(), 0);
  std::vector<std::size_t> pair_start(na * na + 1, 0);
  std::size_t scan = 0;
  for (std::size_t r = 0; r < cp.time_s.size(); ++r) {
    const double t = cp.time_s[r];
    while (scan < night.scans.size() && night.scans[scan].stop_s <= t) ++scan;
    if (scan >= night.scans.size() || night.scans[scan].intent != ScanIntent::kCalibrator ||
        t < night.scans[scan].start_s)
      continue;
    const auto [a, b] = cp.antenna_pair[r];
    if (a < 0 || b < 0 || static_cast<std::size_t>(a) >= na || static_cast<std::size_t>(b) >= na ||
        !std::isfinite(cp.phase_rad[r]))
      continue;
    auto it = std::lower_bound(paths.time_s.begin(), paths.time_s.end(), t);
    if (it == paths.time_s.end() || *it != t) continue;
    const std::size_t k = static_cast<std::size_t>(it - paths.time_s.begin());
    const double la = paths.path_mm[static_cast<std::size_t>(a) * nt + k];
    const double lb = paths.path_mm[static_cast<std::size_t>(b) * nt + k];
    if (!std::isfinite(la) || !std::isfinite(lb)) continue;
    auto kk = k_cache.find(cp.freq_ghz[r]);
    if (kk == k_cache.end())
      kk = k_cache
               .emplace(cp.freq_ghz[r],
                        k_rad_per_mm(cp.freq_ghz[r]) * phase_per_path(cp.freq_ghz[r]))
               .first;
    const double sa = antenna_scale.empty() ? 1.0 : antenna_scale[static_cast<std::size_t>(a)];
    const double sb = antenna_scale.empty() ? 1.0 : antenna_scale[static_cast<std::size_t>(b)];
    m.corrected_phase_rad[r] =
        detail::wrap_phase_rad(cp.phase_rad[r] - kk->second * (sb * lb - sa * la));
    const std::size_t pair = static_cast<std::size_t>(a) * na + static_cast<std::size_t>(b);
    row_pair[r] = static_cast<std::uint32_t>(pair);
    row_scan[r] = static_cast<std::uint32_t>(scan);
    ++pair_start[pair + 1];
  }
  for (std::size_t p = 0; p + 1 < pair_start.size(); ++p) pair_start[p + 1] += pair_start[p];
  std::vector<std::size_t> grouped(pair_start.back()),
      fill_at(pair_start.begin(), pair_start.end() - 1);
  for (std::size_t r = 0; r < cp.time_s.size(); ++r)
    if (row_pair[r] != kUnused) grouped[fill_at[row_pair[r]]++] = r;
  // Pool squared deviations from each group's circular mean per baseline and per antenna;
  // groups in (baseline, scan) order.
  std::vector<std::array<double, 3>> pair_sums(na * na, {0.0, 0.0, 0.0});  // n, sum2 before, after
  std::vector<std::array<double, 3>> antenna_sums(na, {0.0, 0.0, 0.0});
  for (std::size_t p = 0; p + 1 < pair_start.size(); ++p) {
    for (std::size_t first = pair_start[p]; first < pair_start[p + 1];) {
      std::size_t last = first;
      double cb = 0.0, sb = 0.0, ca = 0.0, sa = 0.0;
      for (; last < pair_start[p + 1] && row_scan[grouped[last]] == row_scan[grouped[first]];
           ++last) {
        const std::size_t r = grouped[last];
        cb += std::cos(cp.phase_rad[r]);
        sb += std::sin(cp.phase_rad[r]);
        ca += std::cos(m.corrected_phase_rad[r]);
        sa += std::sin(m.corrected_phase_rad[r]);
      }
      const double mean_before = std::atan2(sb, cb), mean_after = std::atan2(sa, ca);
      auto& s = pair_sums[p];
      for (std::size_t i = first; i < last; ++i) {
        const std::size_t r = grouped[i];
        const double db = detail::wrap_phase_rad(cp.phase_rad[r] - mean_before);
        const double da = detail::wrap_phase_rad(m.corrected_phase_rad[r] - mean_after);
        s[0] += 1;
        s[1] += db * db;
        s[2] += da * da;
        for (std::size_t ant : {p / na, p % na}) {
          auto& as = antenna_sums[ant];
          as[0] += 1;
          as[1] += db * db;
          as[2] += da * da;
        }
      }
      first = last;
    }
  }
  auto fill = [](auto& out, const std::array<double, 3>& s) {
    const double before = std::sqrt(s[1] / s[0]), after = std::sqrt(s[2] / s[0]);
    out.samples = static_cast<std::size_t>(s[0]);
    out.rms_before_deg = before * kDeg;
    out.rms_after_deg = after * kDeg;
    out.coherence_before = std::exp(-0.5 * before * before);
    out.coherence_after = std::exp(-0.5 * after * after);
    out.improvement_factor = after > 0 ? before / after : std::nan("");
  };
  std::vector<double> rb, ra, cb, ca;
  for (std::size_t p = 0; p < pair_sums.size(); ++p) {
    const std::array<double, 3>& s = pair_sums[p];
    if (s[0] == 0) continue;
    BaselineMetrics b;
    b.antenna_a = static_cast<int>(p / na);
    b.antenna_b = static_cast<int>(p % na);
    fill(b, s);
    m.baselines.push_back(b);
    rb.push_back(b.rms_before_deg);
    ra.push_back(b.rms_after_deg);
    cb.push_back(b.coherence_before);
    ca.push_back(b.coherence_after);
  }
  m.antennas.resize(na);
  for (std::size_t a = 0; a < na; ++a) {
    if (antenna_sums[a][0] > 0) {
      fill(m.antennas[a], antenna_sums[a]);
    } else {
      m.antennas[a] = {0, std::nan(""), std::nan(""), std::nan(""), std::nan(""), std::nan("")};
    }
  }
  m.phase_rms_before_deg = detail::finite_median(rb);
  m.phase_rms_after_deg = detail::finite_median(ra);
  m.coherence_before = detail::finite_median(cb);
  m.coherence_after = detail::finite_median(ca);
  m.improvement_factor = m.phase_rms_before_deg / m.phase_rms_after_deg;
  return m;
}

ResultGroup correction_result_group(const PhaseCorrections& p, const CorrectionMetrics& m) {
  ResultGroup g;
  g.stage = "correction";
  g.attributes["obs_freq_ghz"] = std::to_string(p.obs_freq_ghz);
  g.attributes["phase_per_path"] = std::to_string(p.phase_per_path);
  g.attributes["sign"] =
      "add phase_correction_rad to each antenna's visibility phase (baseline a-b: phi_b - phi_a)";
  const std::size_t na = p.antenna_scale.size(), nt = p.time_s.size(), nb = m.baselines.size();
  g.datasets.push_back({"time_s", {nt}, p.time_s, "s", {}});
  g.datasets.push_back({"phase_correction_rad", {na, nt}, p.phase_correction_rad, "rad", {}});
  g.datasets.push_back({"wet_path_mm", {na, nt}, p.path_mm, "mm", {}});
  g.datasets.push_back({"flags",
                        {na, nt},
                        p.flags,
                        "1",
                        {{"bits", "1 no data, 2 bad brightness, 4 no coefficients"}}});
  // Corrections made by hand may leave the prediction fields empty: nothing was predicted.
  g.datasets.push_back({"path_predicted",
                        {na, nt},
                        p.path_predicted.size() == na * nt ? p.path_predicted
                                                           : std::vector<std::uint8_t>(na * nt, 0),
                        "1",
                        {{"values", "0 measured, 1 predicted from neighbours, 2 by frozen flow"}}});
  g.datasets.push_back({"predicted_path_expected_residual_mm",
                        {na},
                        p.predicted_expected_residual_mm.size() == na
                            ? p.predicted_expected_residual_mm
                            : std::vector<double>(na, std::nan("")),
                        "mm",
                        {}});
  g.datasets.push_back({"antenna_scale", {na}, p.antenna_scale, "1", {}});
  g.datasets.push_back({"corrected_calibrator_phase_rad",
                        {m.corrected_phase_rad.size()},
                        m.corrected_phase_rad,
                        "rad",
                        {}});
  std::vector<std::int32_t> pairs;
  std::vector<double> before, after, coh_before, coh_after;
  for (const BaselineMetrics& b : m.baselines) {
    pairs.push_back(b.antenna_a);
    pairs.push_back(b.antenna_b);
    before.push_back(b.rms_before_deg);
    after.push_back(b.rms_after_deg);
    coh_before.push_back(b.coherence_before);
    coh_after.push_back(b.coherence_after);
  }
  g.datasets.push_back({"baseline_antennas", {nb, 2}, pairs, "1", {}});
  g.datasets.push_back({"baseline_phase_rms_before_deg", {nb}, before, "deg", {}});
  g.datasets.push_back({"baseline_phase_rms_after_deg", {nb}, after, "deg", {}});
  g.datasets.push_back({"baseline_coherence_before", {nb}, coh_before, "1", {}});
  g.datasets.push_back({"baseline_coherence_after", {nb}, coh_after, "1", {}});
  std::vector<double> ab, aa;
  for (const AntennaMetrics& a : m.antennas) {
    ab.push_back(a.rms_before_deg);
    aa.push_back(a.rms_after_deg);
  }
  g.datasets.push_back({"antenna_phase_rms_before_deg", {na}, ab, "deg", {}});
  g.datasets.push_back({"antenna_phase_rms_after_deg", {na}, aa, "deg", {}});
  return g;
}

}  // namespace wvr
