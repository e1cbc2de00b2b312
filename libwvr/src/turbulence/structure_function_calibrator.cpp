// Temporal structure function of calibrator phases mapped onto the flow
// (wvr/structure_function.hpp).

#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

#include "core/phase_wrap.hpp"
#include "turbulence/calibrator_groups.hpp"
#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {

void CalibratorTemporalOptions::validate() const {
  require_in_range("min_baseline_over_flow", min_baseline_over_flow, 0.0, 1e3);
  require_in_range("max_rms_phase_rad", max_rms_phase_rad, 1e-3, 3.0, "rad");
  for (double lag : lag_s) require_in_range("lag_s", lag, 1e-6, 1e6, "s");
  if (min_pairs < 1) throw InvalidInput("min_pairs = 0 must be at least 1");
}

std::string CalibratorTemporalResult::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": " << estimate.separation.size() << " lags at " << speed_m_s
      << " m/s";
  if (!estimate.separation.empty()) {
    out << ", flow separations " << estimate.separation.front() << " .. "
        << estimate.separation.back() << " m";
  }
  out << ", " << baselines_used << " baselines";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

CalibratorTemporalResult calibrator_temporal_structure(const Night& night,
                                                       std::span<const double> phase_rad,
                                                       double speed_m_s,
                                                       const CalibratorTemporalOptions& options) {
  options.validate();
  require_in_range("speed_m_s", speed_m_s, 1e-3, 1e3, "m/s");
  detail::require_row_phases(night, phase_rad);
  return detail::calibrator_temporal_from_groups(
      night, detail::group_calibrator_rows(night, phase_rad, detail::calibrator_scans(night)),
      speed_m_s, options);
}

CalibratorTemporalResult detail::calibrator_temporal_from_groups(
    const Night& night,
    const detail::CalibratorGroups& grouped,
    double speed_m_s,
    const CalibratorTemporalOptions& options) {
  options.validate();
  require_in_range("speed_m_s", speed_m_s, 1e-3, 1e3, "m/s");
  CalibratorTemporalResult result;
  result.speed_m_s = speed_m_s;
  const int na = static_cast<int>(night.antenna_count());
  const bool no_scans = detail::calibrator_scans(night).empty();
  if (no_scans || na < 2) {
    result.message =
        no_scans ? "no calibrator scans in the night" : "fewer than two antennas: no baselines";
    return result;
  }
  // Cadence: the median step within the groups, over at most kCadenceSteps of them taken at
  // an even stride (every baseline's steps of a night with every baseline stored would take
  // 93 MB at the stage's peak memory; regular sampling gives the same median either way).
  constexpr std::size_t kCadenceSteps = 1000000;
  std::size_t step_count = 0, longest = 0;
  for (const detail::CalibratorGroup& group : grouped.groups) {
    longest = std::max(longest, group.rows.size());
    for (std::size_t i = 1; i < group.rows.size(); ++i)
      step_count += group.rows[i].time_s > group.rows[i - 1].time_s ? 1 : 0;
  }
  const std::size_t stride = std::max<std::size_t>(1, step_count / kCadenceSteps);
  std::vector<double> steps;
  steps.reserve(step_count / stride + 1);
  std::size_t step_index = 0;
  for (const detail::CalibratorGroup& group : grouped.groups) {
    const std::span<const detail::CalibratorRow> rows = group.rows;
    for (std::size_t i = 1; i < rows.size(); ++i) {
      const double dt = rows[i].time_s - rows[i - 1].time_s;
      if (dt > 0.0 && step_index++ % stride == 0) steps.push_back(dt);
    }
  }
  if (steps.empty()) {
    result.message = "no calibrator scan has two samples of one baseline";
    return result;
  }
  std::nth_element(steps.begin(), steps.begin() + static_cast<std::ptrdiff_t>(steps.size() / 2),
                   steps.end());
  const double cadence_s = steps[steps.size() / 2];
  // Lags in samples: the options', or 1, 2, 3, 5, 8, ... up to half the longest scan.
  std::vector<std::size_t> lag_samples;
  if (options.lag_s.empty()) {
    for (std::size_t a = 1, b = 2; a <= longest / 2; std::tie(a, b) = std::pair{b, a + b})
      lag_samples.push_back(a);
  } else {
    for (double lag : options.lag_s)
      lag_samples.push_back(std::max<std::size_t>(1, std::lround(lag / cadence_s)));
  }
  // User lags may round to the same sample count.
  std::sort(lag_samples.begin(), lag_samples.end());
  lag_samples.erase(std::unique(lag_samples.begin(), lag_samples.end()), lag_samples.end());
  std::vector<double> sum_sq(lag_samples.size(), 0.0), sum_sq_rad(lag_samples.size(), 0.0);
  std::vector<std::size_t> count(lag_samples.size(), 0);
  std::vector<bool> baseline_used(static_cast<std::size_t>(na) * static_cast<std::size_t>(na));
  for (const detail::CalibratorGroup& group : grouped.groups) {
    const std::span<const detail::CalibratorRow> rows = group.rows;
    const auto& pa = night.array.position_enu_m[static_cast<std::size_t>(group.a)];
    const auto& pb = night.array.position_enu_m[static_cast<std::size_t>(group.b)];
    const double baseline_m = std::hypot(pb[0] - pa[0], pb[1] - pa[1]);
    for (std::size_t l = 0; l < lag_samples.size(); ++l) {
      const std::size_t k = lag_samples[l];
      const double lag = static_cast<double>(k) * cadence_s;
      // Short baselines: the two antennas' residuals are correlated, D_baseline < 2 D_antenna.
      if (baseline_m < options.min_baseline_over_flow * speed_m_s * lag) continue;
      for (std::size_t i = 0; i + k < rows.size(); ++i) {
        // Regular sampling inside a scan; a gap breaks the pair.
        if (std::abs(rows[i + k].time_s - rows[i].time_s - lag) > 0.5 * cadence_s) continue;
        const double d_rad = detail::wrap_phase_rad(rows[i + k].phase_rad - rows[i].phase_rad);
        const double d = d_rad * rows[i].metres_per_rad;
        sum_sq_rad[l] += d_rad * d_rad;
        sum_sq[l] += d * d;
        ++count[l];
        baseline_used[static_cast<std::size_t>(group.a * na + group.b)] = true;
      }
    }
  }
  result.baselines_used =
      static_cast<std::size_t>(std::count(baseline_used.begin(), baseline_used.end(), true));
  std::size_t wrapped = 0;
  for (std::size_t l = 0; l < lag_samples.size(); ++l) {
    if (count[l] < options.min_pairs) continue;
    if (std::sqrt(sum_sq_rad[l] / static_cast<double>(count[l])) > options.max_rms_phase_rad) {
      ++wrapped;
      continue;
    }
    const double lag = static_cast<double>(lag_samples[l]) * cadence_s;
    result.lag_s.push_back(lag);
    result.estimate.separation.push_back(speed_m_s * lag);
    // Two independent antennas per long baseline: the antenna-based D is half.
    result.estimate.value_m2.push_back(0.5 * sum_sq[l] / static_cast<double>(count[l]));
    result.estimate.pair_count.push_back(count[l]);
  }
  if (wrapped > 0) {
    result.message = std::to_string(wrapped) +
                     " lags left out: their phase differences wrap (rms above max_rms_phase_rad)";
  }
  if (result.estimate.separation.empty()) {
    result.message = "no lag had " + std::to_string(options.min_pairs) +
                     " sample pairs on baselines long enough" +
                     (wrapped > 0 ? " and phase differences that do not wrap" : "");
    return result;
  }
  result.status = DiagnosticStatus::kOk;
  return result;
}

}  // namespace wvr
