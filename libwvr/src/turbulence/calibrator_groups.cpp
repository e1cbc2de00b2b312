#include "turbulence/calibrator_groups.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr::detail {

void require_row_phases(const Night& night, std::span<const double> phase_rad) {
  const CalibratorPhases& cp = night.calibrator_phases;
  if (phase_rad.size() != cp.time_s.size() || cp.antenna_pair.size() != cp.time_s.size() ||
      cp.freq_ghz.size() != cp.time_s.size()) {
    throw InvalidInput("phase_rad has " + std::to_string(phase_rad.size()) + " values for " +
                       std::to_string(cp.time_s.size()) + " calibrator rows (antenna_pair " +
                       std::to_string(cp.antenna_pair.size()) + ", freq_ghz " +
                       std::to_string(cp.freq_ghz.size()) + ")");
  }
}

std::vector<const Scan*> calibrator_scans(const Night& night) {
  std::vector<const Scan*> scans;
  for (const Scan& s : night.scans)
    if (s.intent == ScanIntent::kCalibrator) scans.push_back(&s);
  return scans;
}

CalibratorGroups group_calibrator_rows(const Night& night,
                                       std::span<const double> phase_rad,
                                       const std::vector<const Scan*>& scans) {
  const CalibratorPhases& cp = night.calibrator_phases;
  const auto na = static_cast<int>(night.antenna_count());
  const std::size_t pairs = static_cast<std::size_t>(na) * static_cast<std::size_t>(na);
  constexpr std::size_t kUnused = std::numeric_limits<std::size_t>::max();
  // Each row's baseline (a * na + b, a < b), or kUnused; `scan` follows the rows' times. Run
  // twice (count, then place) rather than stored per row: with every baseline of 64 antennas
  // x 8 h, per-row arrays cost 46 MB each at the turbulence stage's peak memory.
  const auto baseline_of = [&](std::size_t k, std::size_t& scan) {
    const double t = cp.time_s[k];
    while (scan < scans.size() && scans[scan]->stop_s < t) ++scan;
    const int a = cp.antenna_pair[k][0], b = cp.antenna_pair[k][1];
    const bool in_scan = scan < scans.size() && t >= scans[scan]->start_s;
    if (!in_scan || a < 0 || b < 0 || a >= na || b >= na || a == b ||
        !std::isfinite(phase_rad[k]) || !(cp.freq_ghz[k] > 0.0) || !std::isfinite(t)) {
      return kUnused;
    }
    return static_cast<std::size_t>(std::min(a, b) * na + std::max(a, b));
  };
  CalibratorGroups out;
  // Pass 1: counts per baseline.
  std::vector<std::size_t> start(pairs + 1, 0);
  std::size_t scan = 0;
  for (std::size_t k = 0; k < cp.time_s.size(); ++k) {
    const std::size_t pair = baseline_of(k, scan);
    if (pair == kUnused) {
      ++out.skipped;
    } else {
      ++start[pair + 1];
    }
  }
  for (std::size_t p = 0; p < pairs; ++p) start[p + 1] += start[p];
  // Pass 2: rows into their baseline's bucket, in stored order.
  out.rows.resize(start[pairs]);
  std::vector<std::size_t> fill(start.begin(), start.end() - 1);
  scan = 0;
  for (std::size_t k = 0; k < cp.time_s.size(); ++k) {
    const std::size_t pair = baseline_of(k, scan);
    if (pair == kUnused) continue;
    const int a = cp.antenna_pair[k][0], b = cp.antenna_pair[k][1];
    out.rows[fill[pair]++] = {
        cp.time_s[k], (a < b ? 1.0 : -1.0) * phase_rad[k],
        constants::speed_of_light_m_per_s / (2.0 * std::numbers::pi * cp.freq_ghz[k] * 1e9)};
  }
  // Groups: each baseline's rows (in time order) split where the scan changes.
  for (std::size_t p = 0; p < pairs; ++p) {
    std::size_t row_scan = 0;
    const auto scan_at = [&](std::size_t i) {
      while (row_scan < scans.size() && scans[row_scan]->stop_s < out.rows[i].time_s) ++row_scan;
      return row_scan;
    };
    for (std::size_t i = start[p]; i < start[p + 1];) {
      const std::size_t group_scan = scan_at(i);
      std::size_t j = i + 1;
      while (j < start[p + 1] && scan_at(j) == group_scan) ++j;
      out.groups.push_back({static_cast<int>(p / static_cast<std::size_t>(na)),
                            static_cast<int>(p % static_cast<std::size_t>(na)), group_scan,
                            std::span<const CalibratorRow>(out.rows.data() + i, j - i)});
      i = j;
    }
  }
  return out;
}

}  // namespace wvr::detail
