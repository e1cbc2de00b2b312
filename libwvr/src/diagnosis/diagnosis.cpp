#include "wvr/diagnosis.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>
#include <sstream>

#include "core/parallel_for.hpp"
#include "core/phase_wrap.hpp"
#include "core/statistics.hpp"
#include "diagnosis/inheritance.hpp"
#include "diagnosis/residual_floor.hpp"
#include "diagnosis/residual_trend.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {

std::string to_string(Verdict verdict) {
  switch (verdict) {
    case Verdict::kCorrected:
      return "corrected";
    case Verdict::kQuietSky:
      return "quiet sky";
    case Verdict::kDryTurbulence:
      return "dry turbulence";
    case Verdict::kCloud:
      return "cloud";
    case Verdict::kRadiometerFault:
      return "radiometer fault";
    case Verdict::kScaleOff:
      return "scale off";
    case Verdict::kCannotJudge:
      return "cannot judge";
    case Verdict::kOutsideDomain:
      return "outside retrieval domain";
  }
  return "unknown";
}

bool correction_usable(Verdict verdict) {
  return verdict == Verdict::kCorrected || verdict == Verdict::kQuietSky;
}

std::string describe_antenna_faults(std::uint8_t faults) {
  static const std::pair<std::uint8_t, const char*> kNames[] = {
      {kFaultNoData, "no data"},
      {kFaultStuckChannel, "stuck channel"},
      {kFaultSpikes, "spikes"},
      {kFaultInconsistent, "channels inconsistent"},
      {kFaultWorseResidual, "residual worse than neighbours"}};
  std::string out;
  for (const auto& [bit, name] : kNames) {
    if ((faults & bit) == 0) continue;
    if (!out.empty()) out += ", ";
    out += name;
  }
  return out.empty() ? "ok" : out;
}

void DiagnosisThresholds::validate() const {
  require_in_range("cloud_chi2_per_dof", cloud_chi2_per_dof, 1.0, 1e6);
  require_in_range("cloud_antenna_fraction", cloud_antenna_fraction, 0.0, 1.0);
  require_in_range("quiet_floor_ratio", quiet_floor_ratio, 1.0, 100.0);
  require_in_range("dry_floor_ratio", dry_floor_ratio, 1.0, 100.0);
  require_in_range("scale_min_correlation", scale_min_correlation, 0.0, 1.0);
  require_in_range("scale_tolerance", scale_tolerance, 0.0, 10.0);
  require_in_range("fault_unusable_fraction", fault_unusable_fraction, 0.0, 1.0);
  require_in_range("stuck_noise_fraction", stuck_noise_fraction, 0.0, 10.0);
  require_in_range("spike_chi2_per_dof", spike_chi2_per_dof, 1.0, 1e9);
  require_in_range("spike_fraction", spike_fraction, 0.0, 1.0);
  require_in_range("fault_chi2_ratio", fault_chi2_ratio, 1.0, 1e6);
  require_in_range("fault_residual_ratio", fault_residual_ratio, 1.0, 1e6);
  require_in_range("fault_array_fraction", fault_array_fraction, 0.0, 1.0);
  require_in_range("systematic_window_s", systematic_window_s, 60.0, 1e7);
}

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr double kDeg = 180.0 / std::numbers::pi;

// Statistics of one baseline in one calibrator scan.
struct BaselineWindow {
  std::size_t a = 0, b = 0, n = 0;
  double rms_before = 0, rms_after = 0, floor = 0, correlation = 0, slope = 0, predicted_rms = 0;
  double rms_refit = 0;  // scatter left after rescaling the prediction by `slope`
};

// Retrieval flags that say the unit gave nothing usable (the rest of kRetrievalUnusable is the
// table's domain: the pointing or the sky).
constexpr std::uint8_t kUnitUnusable = kRetrievalUnusable & ~kFlagOutOfDomain;

// Samples of one antenna in one scan that lie outside the retrieval's domain.
struct OutsideDomain {
  std::size_t elevation = 0;  // below (or above) the table's elevation range
  std::size_t sky = 0;  // surface temperature or PWV (any cause, for retrievals without the bit)
  double lowest_elevation_deg = std::numeric_limits<double>::infinity();
  std::size_t samples() const { return elevation + sky; }
};

// Radiometer-only evidence for antenna a over samples [k0, k1).
std::uint8_t antenna_radiometer_faults(const Night& night,
                                       const NightRetrieval& r,
                                       const std::vector<double>& sample_chi2,
                                       std::size_t a,
                                       std::size_t k0,
                                       std::size_t k1,
                                       double array_chi2,
                                       const DiagnosisThresholds& th,
                                       double& chi2_median,
                                       OutsideDomain& outside) {
  const std::size_t nt = night.time_count(), nc = night.channel_count();
  std::uint8_t faults = 0;
  std::size_t unusable = 0, spikes = 0;
  std::vector<double> chi2;
  std::vector<double> sum(nc, 0.0), sum2(nc, 0.0);
  std::size_t n = 0;
  outside = {};
  for (std::size_t k = k0; k < k1; ++k) {
    const std::uint8_t flags = r.flags[a * nt + k];
    if (flags & kUnitUnusable) {
      ++unusable;
      continue;
    }
    if (flags & kFlagOutOfDomain) {
      if (flags & kFlagElevationOutOfDomain) {
        ++outside.elevation;
        outside.lowest_elevation_deg =
            std::min(outside.lowest_elevation_deg, night.pointing.elevation_deg[a * nt + k]);
      } else {
        ++outside.sky;
      }
      continue;
    }
    const double c = sample_chi2[a * nt + k];
    if (!std::isfinite(c)) continue;
    chi2.push_back(c);
    if (c > th.spike_chi2_per_dof) ++spikes;
    for (std::size_t ch = 0; ch < nc; ++ch) {
      const double v = night.radiometer.brightness_k[(a * nt + k) * nc + ch];
      sum[ch] += v;
      sum2[ch] += v * v;
    }
    ++n;
  }
  // Judged on the samples inside the domain: a scan the source sets in is not a dropout.
  const std::size_t inside = k1 - k0 - outside.samples();
  chi2_median = detail::finite_median(chi2);
  if (inside > 0 &&
      static_cast<double>(unusable) > th.fault_unusable_fraction * static_cast<double>(inside))
    faults |= kFaultNoData;
  if (n > 10) {
    for (std::size_t ch = 0; ch < nc; ++ch) {
      const double mean = sum[ch] / static_cast<double>(n);
      const double var = std::max(0.0, sum2[ch] / static_cast<double>(n) - mean * mean);
      const double noise = night.radiometer.config.channels[ch].noise_k;
      if (noise > 0.0 && std::sqrt(var) < th.stuck_noise_fraction * noise)
        faults |= kFaultStuckChannel;
    }
    if (static_cast<double>(spikes) > th.spike_fraction * static_cast<double>(n) &&
        chi2_median < th.cloud_chi2_per_dof) {
      faults |= kFaultSpikes;
    }
  }
  if (std::isfinite(chi2_median) && std::isfinite(array_chi2) &&
      chi2_median > th.fault_chi2_ratio * array_chi2 && chi2_median > 0.5 * th.cloud_chi2_per_dof) {
    faults |= kFaultInconsistent;
  }
  return faults;
}

// What put `outside` (summed over a scan's antennas) outside the retrieval's domain, with the
// share of the scan's `samples` each cause took, e.g. "source below the retrieval's 14 deg
// elevation limit (lowest elevation 12.3 deg) in 40 % of the samples".
std::string describe_outside_domain(const OutsideDomain& outside,
                                    std::size_t samples,
                                    double table_min_elevation_deg) {
  std::ostringstream out;
  out.precision(3);
  auto share = [&](std::size_t n) {
    const double percent = 100.0 * static_cast<double>(n) / static_cast<double>(samples);
    std::ostringstream text;
    if (percent < 1.0) {
      text << "under 1 %";
    } else {
      text << std::lround(percent) << " %";
    }
    return " in " + text.str() + " of the samples";
  };
  if (outside.elevation > 0) {
    const bool limit_known = std::isfinite(table_min_elevation_deg);
    const bool below = std::isfinite(outside.lowest_elevation_deg) &&
                       (!limit_known || outside.lowest_elevation_deg < table_min_elevation_deg);
    if (below) {
      out << "source below the retrieval's ";
      if (limit_known) out << table_min_elevation_deg << " deg ";
      out << "elevation limit (lowest elevation " << outside.lowest_elevation_deg << " deg)";
    } else {
      out << "elevation outside the retrieval's table";
    }
    out << share(outside.elevation);
  }
  if (outside.sky > 0) {
    if (outside.elevation > 0) out << ", ";
    // Retrievals that recorded no elevation limit predate the elevation bit: their
    // out-of-domain samples may be the pointing's too.
    out << (std::isfinite(table_min_elevation_deg) ? "surface temperature or PWV"
                                                   : "elevation, surface temperature or PWV")
        << " outside the retrieval's table" << share(outside.sky);
  }
  return out.str();
}

}  // namespace

NightDiagnosis diagnose_night(const Night& night,
                              const NightRetrieval& r,
                              const AntennaPaths& paths,
                              const CorrectionMetrics& metrics,
                              const PhasePerPath& phase_per_path,
                              const DiagnosisThresholds& th,
                              int threads) {
  th.validate();
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " is negative");
  // Scans are judged independently, each on one thread; the results do not depend on the count.
  const std::size_t workers = detail::worker_count(threads, night.scans.size());
  const std::size_t na = night.antenna_count(), nt = night.time_count();
  if (r.antennas != na || r.samples != nt || paths.antennas != na || paths.time_s.size() != nt) {
    throw InvalidInput(
        "diagnosis: retrieval and paths do not match the night's antennas and samples");
  }
  const CalibratorPhases& cp = night.calibrator_phases;
  if (metrics.corrected_phase_rad.size() != cp.time_s.size()) {
    throw InvalidInput(
        "diagnosis: corrected phases do not match the night's calibrator phase rows");
  }
  NightDiagnosis d;
  d.antenna_names = night.array.antenna_names;
  d.thresholds = th;
  if (cp.time_s.empty())
    d.notes.push_back("no calibrator phases: phase-based verdicts cannot be judged");
  if (na < 2)
    d.notes.push_back("a single antenna: no baselines, phase-based verdicts cannot be judged");
  // Radiometer evidence is judged against thermal noise plus the model error the night shows,
  // after the residual's systematic part (offsets per antenna and channel, a slow common part).
  const detail::ResidualEvidence evidence =
      detail::residual_evidence(night, r, th.systematic_window_s);
  d.radiometer_floor = evidence.floor;
  const auto& times = night.radiometer.time_s;
  auto sample_index = [&](double t) {
    return static_cast<std::size_t>(std::lower_bound(times.begin(), times.end(), t) -
                                    times.begin());
  };
  // Rows of each scan.
  std::vector<std::vector<std::size_t>> scan_rows(night.scans.size());
  {
    std::size_t s = 0;
    for (std::size_t i = 0; i < cp.time_s.size(); ++i) {
      while (s < night.scans.size() && night.scans[s].stop_s <= cp.time_s[i]) ++s;
      if (s < night.scans.size() && cp.time_s[i] >= night.scans[s].start_s)
        scan_rows[s].push_back(i);
    }
  }
  // Phase per mm of path at a frequency, from a cache of the frequencies met so far (one per
  // thread).
  auto k_of = [&](std::map<double, double>& cache, double f) {
    auto it = cache.find(f);
    if (it == cache.end()) {
      it = cache
               .emplace(f, kTwoPi * f * 1e9 / constants::speed_of_light_m_per_s * 1e-3 *
                               phase_per_path(f))
               .first;
    }
    return it->second;
  };
  // Median residual chi2 of every antenna in every scan, and each antenna's usual level
  // relative to the array: a unit whose channels differ a little more from the model all night
  // (a larger gain error) is not a fault; up to half the fault ratio is allowed for it.
  std::vector<std::vector<double>> scan_chi2(night.scans.size(), std::vector<double>(na));
  std::vector<double> usual_level(na, 1.0);
  // And the median chi2 of each antenna's slow drift in every scan.
  std::vector<std::vector<double>> scan_drift_chi2(night.scans.size(), std::vector<double>(na));
  {
    detail::parallel_blocks(
        night.scans.size(), workers, [&](std::size_t first, std::size_t end, std::size_t) {
          for (std::size_t s = first; s < end; ++s) {
            const std::size_t k0 = sample_index(night.scans[s].start_s),
                              k1 = sample_index(night.scans[s].stop_s);
            OutsideDomain unused_outside;
            for (std::size_t a = 0; a < na; ++a) {
              antenna_radiometer_faults(night, r, evidence.chi2_per_dof, a, k0, k1, std::nan(""),
                                        th, scan_chi2[s][a], unused_outside);
              const auto drift =
                  evidence.drift_chi2_per_dof.begin() + static_cast<std::ptrdiff_t>(a * nt);
              scan_drift_chi2[s][a] = detail::finite_median(
                  std::vector<double>(drift + static_cast<std::ptrdiff_t>(k0),
                                      drift + static_cast<std::ptrdiff_t>(k1)));
            }
          }
        });
    std::vector<std::vector<double>> relative(na);
    for (std::size_t s = 0; s < night.scans.size(); ++s) {
      const double array_chi2 = detail::finite_median(scan_chi2[s]);
      for (std::size_t a = 0; a < na; ++a) relative[a].push_back(scan_chi2[s][a] / array_chi2);
    }
    for (std::size_t a = 0; a < na; ++a) {
      const double level = detail::finite_median(relative[a]);
      if (std::isfinite(level)) usual_level[a] = std::clamp(level, 1.0, 0.5 * th.fault_chi2_ratio);
    }
  }
  d.windows.resize(night.scans.size());
  // [window]: own radiometer evidence, no array fault; bytes, as threads write their own.
  std::vector<std::uint8_t> judged_on_own(night.scans.size(), 0);
  detail::parallel_blocks(
      night.scans.size(), workers, [&](std::size_t first, std::size_t end, std::size_t) {
        // Rows of each baseline within a window; reused from window to window (a map per window
        // cost more than the statistics on nights with every baseline).
        std::vector<std::vector<std::size_t>> by_baseline(na * na);
        std::vector<std::size_t> baselines_seen;
        std::map<double, double> k_cache;
        for (std::size_t s = first; s < end; ++s) {
          const Scan& scan = night.scans[s];
          WindowDiagnosis w;
          w.start_s = scan.start_s;
          w.stop_s = scan.stop_s;
          w.calibrator = scan.intent == ScanIntent::kCalibrator;
          w.antenna_faults.assign(na, 0);
          const std::size_t k0 = sample_index(scan.start_s), k1 = sample_index(scan.stop_s);
          // Radiometer evidence: chi2 per antenna, then faults against the array median, each
          // antenna allowed its own usual level.
          const std::vector<double>& chi2 = scan_chi2[s];
          const double array_chi2 = detail::finite_median(chi2);
          const double array_drift_chi2 = detail::finite_median(scan_drift_chi2[s]);
          double unused = 0.0;
          std::size_t cloudy = 0, judged = 0;
          // Samples outside the retrieval's domain, over the scan's antennas, and the antennas
          // outside it for more of the scan than would flag a unit's dropouts.
          OutsideDomain scan_outside;
          std::vector<std::size_t> antennas_outside;
          for (std::size_t a = 0; a < na; ++a) {
            OutsideDomain outside;
            w.antenna_faults[a] =
                antenna_radiometer_faults(night, r, evidence.chi2_per_dof, a, k0, k1,
                                          array_chi2 * usual_level[a], th, unused, outside);
            scan_outside.elevation += outside.elevation;
            scan_outside.sky += outside.sky;
            scan_outside.lowest_elevation_deg =
                std::min(scan_outside.lowest_elevation_deg, outside.lowest_elevation_deg);
            if (static_cast<double>(outside.samples()) >
                th.fault_unusable_fraction * static_cast<double>(k1 - k0))
              antennas_outside.push_back(a);
            // A unit whose slow drift (taken out of the evidence above) stands out from the array's
            // as a short excursion would.
            const double drift_chi2 = scan_drift_chi2[s][a];
            if (drift_chi2 > th.fault_chi2_ratio * array_drift_chi2 &&
                drift_chi2 > 0.5 * th.cloud_chi2_per_dof) {
              w.antenna_faults[a] |= kFaultInconsistent;
            }
            if (std::isfinite(chi2[a])) {
              ++judged;
              if (chi2[a] > th.cloud_chi2_per_dof) ++cloudy;
            }
          }
          w.chi2_per_dof = array_chi2;
          const bool cloud =
              judged > 0 && static_cast<double>(cloudy) >=
                                th.cloud_antenna_fraction * static_cast<double>(judged);
          if (cloud) {
            // A cloud raises every antenna's chi2: not an antenna fault.
            for (auto& f : w.antenna_faults) f &= static_cast<std::uint8_t>(~kFaultInconsistent);
          }
          // Phase evidence per baseline (as stored, a * na + b), baselines in increasing order.
          for (std::size_t pair : baselines_seen) by_baseline[pair].clear();
          baselines_seen.clear();
          for (std::size_t i : scan_rows[s]) {
            const auto [a, b] = cp.antenna_pair[i];
            if (a < 0 || b < 0 || static_cast<std::size_t>(a) >= na ||
                static_cast<std::size_t>(b) >= na)
              continue;
            if (!std::isfinite(metrics.corrected_phase_rad[i])) continue;
            const std::size_t pair = static_cast<std::size_t>(a) * na + static_cast<std::size_t>(b);
            if (by_baseline[pair].empty()) baselines_seen.push_back(pair);
            by_baseline[pair].push_back(i);
          }
          std::sort(baselines_seen.begin(), baselines_seen.end());
          std::vector<BaselineWindow> baselines;
          for (std::size_t pair : baselines_seen) {
            const std::vector<std::size_t>& rows = by_baseline[pair];
            if (rows.size() < 5) continue;
            BaselineWindow bw;
            bw.a = pair / na;
            bw.b = pair % na;
            bw.n = rows.size();
            double cb = 0, sb = 0, ca = 0, sa = 0;
            for (std::size_t i : rows) {
              cb += std::cos(cp.phase_rad[i]);
              sb += std::sin(cp.phase_rad[i]);
              ca += std::cos(metrics.corrected_phase_rad[i]);
              sa += std::sin(metrics.corrected_phase_rad[i]);
            }
            const double mean_before = std::atan2(sb, cb), mean_after = std::atan2(sa, ca);
            std::vector<double> obs, pred;
            double s2b = 0, s2a = 0, sd = 0, prev = std::nan("");
            std::size_t nd = 0;
            for (std::size_t i : rows) {
              const double db = detail::wrap_phase_rad(cp.phase_rad[i] - mean_before);
              const double da = detail::wrap_phase_rad(metrics.corrected_phase_rad[i] - mean_after);
              s2b += db * db;
              s2a += da * da;
              if (std::isfinite(prev)) {
                const double step = detail::wrap_phase_rad(da - prev);
                sd += step * step;
                ++nd;
              }
              prev = da;
              obs.push_back(db);
              // Predicted = observed minus corrected (the radiometer phase), wrapped about its
              // mean.
              pred.push_back(
                  detail::wrap_phase_rad(cp.phase_rad[i] - metrics.corrected_phase_rad[i]));
            }
            // Circular mean: an absolute radiometer path (offsets, a model that differs from the
            // sky) can put the predicted phase near +/-pi, where an arithmetic mean of wrapped
            // values fails.
            double pc = 0.0, ps = 0.0;
            for (double p : pred) {
              pc += std::cos(p);
              ps += std::sin(p);
            }
            const double pm = std::atan2(ps, pc);
            double sxy = 0, sxx = 0, syy = 0;
            for (std::size_t j = 0; j < pred.size(); ++j) {
              const double x = detail::wrap_phase_rad(pred[j] - pm);
              sxy += x * obs[j];
              sxx += x * x;
              syy += obs[j] * obs[j];
            }
            bw.rms_before = std::sqrt(s2b / static_cast<double>(bw.n));
            bw.rms_after = std::sqrt(s2a / static_cast<double>(bw.n));
            bw.floor = nd > 0 ? std::sqrt(sd / static_cast<double>(nd) / 2.0) : std::nan("");
            bw.correlation = sxx > 0 && syy > 0 ? sxy / std::sqrt(sxx * syy) : std::nan("");
            bw.slope = sxx > 0 ? sxy / sxx : std::nan("");
            double s2r = 0.0;
            for (std::size_t j = 0; j < pred.size(); ++j) {
              const double x = detail::wrap_phase_rad(pred[j] - pm);
              s2r += (obs[j] - bw.slope * x) * (obs[j] - bw.slope * x);
            }
            bw.rms_refit = std::sqrt(s2r / static_cast<double>(bw.n));
            const double k = k_of(k_cache, cp.freq_ghz[rows.front()]);
            bw.predicted_rms = std::sqrt(sxx / static_cast<double>(bw.n)) / k * 1000.0;  // um
            baselines.push_back(bw);
          }
          // Antennas whose residual stands out (reference-mode rows name the antenna by baseline).
          // What is left after correction (dry air, mostly) grows with baseline length, so each
          // baseline is compared with the array's trend at its length, not with the array median:
          // otherwise the longest baselines would look faulty whenever dry turbulence is up.
          std::vector<detail::BaselineResidual> residuals;
          std::vector<double> per_antenna_after(na, std::nan(""));
          {
            std::vector<std::vector<double>> values(na);
            for (const BaselineWindow& bw : baselines) {
              const auto& pa = night.array.position_enu_m[bw.a];
              const auto& pb = night.array.position_enu_m[bw.b];
              residuals.push_back(
                  {bw.a, bw.b, std::hypot(pb[0] - pa[0], pb[1] - pa[1]), bw.rms_after});
              values[bw.a].push_back(bw.rms_after);
              values[bw.b].push_back(bw.rms_after);
            }
            for (std::size_t a = 0; a < na; ++a)
              per_antenna_after[a] = detail::finite_median(values[a]);
          }
          const std::vector<double> per_antenna_excess =
              detail::residual_excess(residuals, na, th.fault_residual_ratio);
          // Not under a cloud: its liquid water, read as vapour, spoils the corrected phase of the
          // antennas it covers, and covers some more than others; that is the sky, not their units.
          for (std::size_t a = 0; a < na && !cloud; ++a) {
            std::vector<double> others;
            for (const BaselineWindow& bw : baselines) {
              if (bw.a != a && bw.b != a) others.push_back(bw.floor);
            }
            const double floor_ref = detail::finite_median(others);
            if (std::isfinite(per_antenna_excess[a]) &&
                per_antenna_excess[a] > th.fault_residual_ratio &&
                per_antenna_after[a] > th.dry_floor_ratio * floor_ref) {
              // In reference mode every baseline contains the reference antenna: only flag it when
              // most baselines are bad, which the array statistics below then show instead.
              std::size_t containing = 0;
              for (const BaselineWindow& bw : baselines) containing += (bw.a == a || bw.b == a);
              if (containing < baselines.size()) w.antenna_faults[a] |= kFaultWorseResidual;
            }
          }
          // Array statistics over baselines of healthy antennas.
          std::vector<double> before, after, floors, corr, slopes, pred_rms, refit;
          for (const BaselineWindow& bw : baselines) {
            if (w.antenna_faults[bw.a] || w.antenna_faults[bw.b]) continue;
            before.push_back(bw.rms_before);
            after.push_back(bw.rms_after);
            floors.push_back(bw.floor);
            corr.push_back(bw.correlation);
            slopes.push_back(bw.slope);
            pred_rms.push_back(bw.predicted_rms);
            refit.push_back(bw.rms_refit);
          }
          const double refit_deg = detail::finite_median(refit) * kDeg;
          w.rms_before_deg = detail::finite_median(before) * kDeg;
          w.rms_after_deg = detail::finite_median(after) * kDeg;
          w.floor_deg = detail::finite_median(floors) * kDeg;
          w.improvement_factor = w.rms_before_deg / w.rms_after_deg;
          w.correlation = detail::finite_median(corr);
          w.slope = detail::finite_median(slopes);
          w.radiometer_path_rms_um = detail::finite_median(pred_rms);
          std::size_t flagged = 0;
          for (std::uint8_t f : w.antenna_faults) flagged += f != 0;
          // One sick radiometer flags its antenna; the array verdict describes the healthy ones
          // unless too few are left to speak for the array.
          const bool array_fault =
              flagged > 0 &&
              static_cast<double>(flagged) > th.fault_array_fraction * static_cast<double>(na);
          const bool healthy_baselines = !before.empty();
          // Too much of the array outside the retrieval's domain: there is no radiometer path to
          // judge, which says nothing about the units or the sky's turbulence.
          const bool array_outside =
              !antennas_outside.empty() && static_cast<double>(antennas_outside.size()) >
                                               th.fault_array_fraction * static_cast<double>(na);
          const std::string outside_text =
              scan_outside.samples() > 0
                  ? describe_outside_domain(scan_outside, na * (k1 - k0), r.table_min_elevation_deg)
                  : std::string();
          std::ostringstream reason;
          reason.precision(3);
          if (array_outside) {
            w.verdict = Verdict::kOutsideDomain;
            reason << outside_text << ": no radiometer path for " << antennas_outside.size()
                   << " of " << na << " antennas";
          } else if (judged == 0) {
            w.verdict = Verdict::kCannotJudge;
            reason << "no usable radiometer sample";
          } else if (cloud) {
            w.verdict = Verdict::kCloud;
            reason << "the radiometer residual changed: " << cloudy << " of " << judged
                   << " antennas have chi2/dof above " << th.cloud_chi2_per_dof
                   << " against the floor (median " << array_chi2 << ")";
          } else if (array_fault) {
            w.verdict = Verdict::kRadiometerFault;
            reason << flagged << " of " << na
                   << " antennas flagged, too few healthy ones to judge the sky";
          } else if (!w.calibrator) {
            w.verdict = Verdict::kCannotJudge;
            reason << "target scan: no calibrator phases";
          } else if (baselines.empty()) {
            w.verdict = Verdict::kCannotJudge;
            reason << "no usable calibrator phases";
          } else if (!healthy_baselines) {
            w.verdict = Verdict::kCannotJudge;
            reason << "every baseline with phases contains a flagged antenna";
          } else if (w.rms_before_deg < th.quiet_floor_ratio * w.floor_deg) {
            w.verdict = Verdict::kQuietSky;
            reason << "phase rms before " << w.rms_before_deg << " deg is within "
                   << th.quiet_floor_ratio << " x the floor " << w.floor_deg << " deg";
          } else if (w.correlation > th.scale_min_correlation &&
                     refit_deg <= th.quiet_floor_ratio * w.floor_deg &&
                     (std::abs(w.slope - 1.0) > th.scale_tolerance ||
                      w.rms_after_deg > th.dry_floor_ratio * w.floor_deg)) {
            // What correction left is the radiometer prediction itself, at the wrong scale: for the
            // array (the median slope is off), or per antenna (slopes differ between baselines, as
            // radiometer gains a few per cent apart make them). Rescaled per baseline, the residual
            // then falls to the noise floor, which dry air would not let it. Only to the floor: in
            // a scan of dry turbulence a slope fitted per baseline also takes up the dry phase's
            // chance correlation with the wet one over a few dozen samples (slopes of 0.5-1.3 in
            // the mismatched-night test's dry episode), leaving it well above the floor but below
            // twice it.
            w.verdict = Verdict::kScaleOff;
            reason << "correlation " << w.correlation << ", observed/predicted slope " << w.slope
                   << " (median over baselines); rescaled per baseline, the residual " << refit_deg
                   << " deg is near the floor " << w.floor_deg << " deg (" << w.rms_after_deg
                   << " deg as corrected)";
          } else if (w.rms_after_deg > th.dry_floor_ratio * w.floor_deg) {
            w.verdict = Verdict::kDryTurbulence;
            reason << "residual " << w.rms_after_deg << " deg is above " << th.dry_floor_ratio
                   << " x the floor " << w.floor_deg << " deg; radiometers see "
                   << w.radiometer_path_rms_um << " um rms, correlation " << w.correlation;
          } else {
            w.verdict = Verdict::kCorrected;
            reason << "phase rms " << w.rms_before_deg << " -> " << w.rms_after_deg
                   << " deg (floor " << w.floor_deg << " deg), correlation " << w.correlation;
          }
          if (!array_outside && !outside_text.empty()) {
            reason << "; " << outside_text;
            if (!antennas_outside.empty()) {
              reason << " (most of the scan:";
              for (std::size_t a : antennas_outside) reason << " " << night.array.antenna_names[a];
              reason << ")";
            }
          }
          if (flagged > 0) {
            reason << "; flagged:";
            for (std::size_t a = 0; a < na; ++a) {
              if (w.antenna_faults[a])
                reason << " " << night.array.antenna_names[a] << " ("
                       << describe_antenna_faults(w.antenna_faults[a]) << ")";
            }
          }
          judged_on_own[s] = judged > 0 && !array_fault && !array_outside;
          w.reason = reason.str();
          d.windows[s] = std::move(w);
        }
      });
  const std::vector<bool> radiometer_judged(judged_on_own.begin(), judged_on_own.end());
  // Antenna faults persist: a window between two windows that flag the same antenna is
  // flagged too (intermittent faults such as spikes need not show in every short scan). The
  // array verdict stays with the healthy antennas.
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t i = 1; i + 1 < d.windows.size(); ++i) {
      WindowDiagnosis& w = d.windows[i];
      const std::uint8_t around =
          d.windows[i - 1].antenna_faults[a] & d.windows[i + 1].antenna_faults[a];
      if (around == 0 || (w.antenna_faults[a] & around) == around) continue;
      w.antenna_faults[a] |= around;
      w.reason += "; " + night.array.antenna_names[a] + " flagged between faulty windows (" +
                  describe_antenna_faults(around) + ")";
    }
  }
  detail::inherit_target_verdicts(d.windows, radiometer_judged);
  return d;
}

ResultGroup diagnosis_result_group(const NightDiagnosis& d) {
  ResultGroup g;
  g.stage = "diagnosis";
  std::ostringstream codes;
  for (int v = 0; v <= static_cast<int>(Verdict::kOutsideDomain); ++v) {
    codes << (v ? ", " : "") << v << " " << to_string(static_cast<Verdict>(v));
  }
  g.attributes["verdict_codes"] = codes.str();
  g.attributes["antenna_fault_bits"] =
      "1 no data, 2 stuck channel, 4 spikes, 8 channels inconsistent, 16 residual worse than "
      "neighbours";
  const std::size_t nw = d.windows.size(), na = d.antenna_names.size();
  std::vector<double> start, stop, before, after, floor, corr, slope, chi2, path;
  std::vector<std::uint8_t> verdict, calibrator, inherited, faults;
  for (const WindowDiagnosis& w : d.windows) {
    start.push_back(w.start_s);
    stop.push_back(w.stop_s);
    verdict.push_back(static_cast<std::uint8_t>(w.verdict));
    calibrator.push_back(w.calibrator);
    inherited.push_back(w.inherited);
    before.push_back(w.rms_before_deg);
    after.push_back(w.rms_after_deg);
    floor.push_back(w.floor_deg);
    corr.push_back(w.correlation);
    slope.push_back(w.slope);
    chi2.push_back(w.chi2_per_dof);
    path.push_back(w.radiometer_path_rms_um);
  }
  for (std::size_t a = 0; a < na; ++a) {
    for (const WindowDiagnosis& w : d.windows) faults.push_back(w.antenna_faults[a]);
  }
  g.datasets.push_back({"window_start_s", {nw}, start, "s", {}});
  g.datasets.push_back({"window_stop_s", {nw}, stop, "s", {}});
  g.datasets.push_back({"verdict", {nw}, verdict, "1", {}});
  g.datasets.push_back({"calibrator", {nw}, calibrator, "1", {}});
  g.datasets.push_back({"inherited", {nw}, inherited, "1", {}});
  g.datasets.push_back({"phase_rms_before_deg", {nw}, before, "deg", {}});
  g.datasets.push_back({"phase_rms_after_deg", {nw}, after, "deg", {}});
  g.datasets.push_back({"floor_deg", {nw}, floor, "deg", {}});
  g.datasets.push_back({"correlation", {nw}, corr, "1", {}});
  g.datasets.push_back({"slope", {nw}, slope, "1", {}});
  g.datasets.push_back({"chi2_per_dof", {nw}, chi2, "1", {}});
  g.datasets.push_back({"radiometer_path_rms_um", {nw}, path, "um", {}});
  g.datasets.push_back({"antenna_faults", {na, nw}, faults, "1", {}});
  const RadiometerFloor& f = d.radiometer_floor;
  const std::size_t nc = f.model_error_k.size();
  if (nc > 0) {
    g.datasets.push_back({"radiometer_thermal_noise_k", {nc}, f.thermal_noise_k, "K", {}});
    g.datasets.push_back({"radiometer_model_error_k", {na, nc}, f.antenna_model_error_k, "K", {}});
    g.datasets.push_back(
        {"radiometer_systematic_offset_k", {na, nc}, f.systematic_offset_k, "K", {}});
  }
  g.attributes["radiometer_floor"] = f.describe();
  return g;
}

}  // namespace wvr
