// Spatial structure functions of a night: calibrator phases and radiometer paths
// (wvr/structure_function.hpp).

#include <algorithm>
#include <cmath>
#include <complex>
#include <map>
#include <numbers>
#include <sstream>

#include "core/parallel_for.hpp"
#include "core/phase_wrap.hpp"
#include "turbulence/antenna_pairs.hpp"
#include "turbulence/calibrator_groups.hpp"
#include "turbulence/radiometer_structure_without.hpp"
#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {

const char* to_string(DiagnosticStatus status) {
  switch (status) {
    case DiagnosticStatus::kOk:
      return "ok";
    case DiagnosticStatus::kNoData:
      return "no data";
    case DiagnosticStatus::kTooFewPoints:
      return "too few points";
    case DiagnosticStatus::kNoConvergence:
      return "no convergence";
    case DiagnosticStatus::kSolverFailure:
      return "solver failure";
  }
  return "unknown";
}

void SpatialStructureOptions::validate() const {
  require_in_range("window_s", window_s, 0.0, 1e7, "s");
  if (min_samples < 2)
    throw InvalidInput("min_samples = " + std::to_string(min_samples) + " must be at least 2");
  if (threads < 0)
    throw InvalidInput("threads = " + std::to_string(threads) + " is negative (0: all cores)");
  if (max_pairs < 2)
    throw InvalidInput("max_pairs = " + std::to_string(max_pairs) + " must be at least 2");
}

std::string SpatialStructureResult::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": " << baselines.size() << " baselines";
  if (!baselines.empty()) {
    out << " from " << baselines.front().baseline_m << " to " << baselines.back().baseline_m
        << " m";
  }
  out << ", " << samples_skipped << " samples skipped";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

namespace {

double horizontal_distance_m(const Night& night, int a, int b) {
  const auto& pa = night.array.position_enu_m[static_cast<std::size_t>(a)];
  const auto& pb = night.array.position_enu_m[static_cast<std::size_t>(b)];
  return std::hypot(pb[0] - pa[0], pb[1] - pa[1]);
}

// Sums of one baseline over its segments.
struct Accumulator {
  double sum_sq_m2 = 0.0;
  double noise_m2 = 0.0;  // white-noise variance to subtract
  std::size_t samples = 0, segments = 0;
};

SpatialStructureResult finish(const Night& night,
                              const std::map<std::pair<int, int>, Accumulator>& sums,
                              std::size_t skipped,
                              const std::string& what) {
  SpatialStructureResult result;
  result.samples_skipped = skipped;
  for (const auto& [pair, acc] : sums) {
    if (acc.segments == 0 || acc.samples <= acc.segments) continue;
    BaselineStructure b;
    b.antenna_a = pair.first;
    b.antenna_b = pair.second;
    b.baseline_m = horizontal_distance_m(night, pair.first, pair.second);
    // Each segment's mean costs one degree of freedom.
    b.structure_m2 = acc.sum_sq_m2 / static_cast<double>(acc.samples - acc.segments) - acc.noise_m2;
    b.noise_m2 = acc.noise_m2;
    b.samples = acc.samples;
    b.segments = acc.segments;
    result.baselines.push_back(b);
  }
  std::sort(result.baselines.begin(), result.baselines.end(),
            [](const BaselineStructure& x, const BaselineStructure& y) {
              return x.baseline_m < y.baseline_m;
            });
  if (result.baselines.empty()) {
    result.status = DiagnosticStatus::kNoData;
    result.message = "no baseline had enough usable " + what;
  } else {
    result.status = DiagnosticStatus::kOk;
  }
  return result;
}

}  // namespace

SpatialStructureResult detail::calibrator_structure_from_groups(
    const Night& night,
    const detail::CalibratorGroups& grouped,
    const SpatialStructureOptions& options) {
  options.validate();
  if (detail::calibrator_scans(night).empty()) {
    SpatialStructureResult r;
    r.message = "no calibrator scans in the night";
    return r;
  }
  if (night.antenna_count() < 2) {
    SpatialStructureResult r;
    r.message = "fewer than two antennas: no baselines";
    return r;
  }
  std::size_t skipped = grouped.skipped;
  std::map<std::pair<int, int>, Accumulator> sums;
  for (const detail::CalibratorGroup& group : grouped.groups) {
    if (group.rows.size() < options.min_samples) {
      skipped += group.rows.size();
      continue;
    }
    std::complex<double> mean(0.0, 0.0);
    for (const detail::CalibratorRow& s : group.rows) mean += std::polar(1.0, s.phase_rad);
    const double centre = std::arg(mean);
    Accumulator& acc = sums[{group.a, group.b}];
    for (const detail::CalibratorRow& s : group.rows) {
      // Wrap-aware deviation from the scan's circular mean.
      const double dev_m = detail::wrap_phase_rad(s.phase_rad - centre) * s.metres_per_rad;
      acc.sum_sq_m2 += dev_m * dev_m;
    }
    acc.samples += group.rows.size();
    acc.segments += 1;
  }
  return finish(night, sums, skipped, "calibrator rows");
}

SpatialStructureResult calibrator_structure_function(const Night& night,
                                                     std::span<const double> phase_rad,
                                                     const SpatialStructureOptions& options) {
  options.validate();
  detail::require_row_phases(night, phase_rad);
  const std::vector<const Scan*> scans = detail::calibrator_scans(night);
  return detail::calibrator_structure_from_groups(
      night, detail::group_calibrator_rows(night, phase_rad, scans), options);
}

namespace detail {

namespace {

// A run of samples within one window and on one side of every left-out span's ends.
struct Cell {
  std::size_t window = 0, first = 0, last = 0;
};

// One pair's finite samples of a cell, summed about the cell's first one (shifted sums keep
// the variance accurate).
struct CellSums {
  std::size_t count = 0, non_finite = 0;
  double shift = 0.0, sum = 0.0, sum_sq = 0.0;
};

}  // namespace

std::vector<SpatialStructureResult> radiometer_structure_without(
    const Night& night,
    const AntennaPaths& paths,
    const SpatialStructureOptions& options,
    std::span<const SampleSpan> left_out) {
  options.validate();
  const std::size_t na = paths.antennas;
  const std::size_t nt = paths.time_s.size();
  if (na != night.antenna_count() || paths.path_mm.size() != na * nt) {
    throw InvalidInput("paths: " + std::to_string(paths.antennas) + " antennas x " +
                       std::to_string(nt) + " times with " + std::to_string(paths.path_mm.size()) +
                       " path_mm values do not match the night's " +
                       std::to_string(night.antenna_count()) + " antennas");
  }
  for (const SampleSpan& span : left_out) {
    if (span.first > span.last || span.last > nt)
      throw InvalidInput("left-out samples [" + std::to_string(span.first) + ", " +
                         std::to_string(span.last) + ") are not within the night's " +
                         std::to_string(nt) + " samples");
  }
  const std::vector<double>& noise_mm = options.antenna_path_noise_mm;
  if (!noise_mm.empty()) {
    if (noise_mm.size() != na) {
      throw InvalidInput("antenna_path_noise_mm has " + std::to_string(noise_mm.size()) +
                         " values for " + std::to_string(na) + " antennas");
    }
    for (std::size_t a = 0; a < na; ++a) {
      // NaN means "unknown" (no noise subtracted); anything else must be a finite value >= 0.
      if (!std::isnan(noise_mm[a]) && !(noise_mm[a] >= 0.0 && std::isfinite(noise_mm[a])))
        throw InvalidInput(
            describe_value("antenna_path_noise_mm[" + std::to_string(a) + "]", noise_mm[a]) +
            " must be finite and >= 0 mm (or NaN: unknown)");
    }
  }
  const auto noise_variance_m2 = [&](std::size_t a) {
    const double s = noise_mm.empty() || !std::isfinite(noise_mm[a]) ? 0.0 : noise_mm[a] * 1e-3;
    return s * s;
  };
  const std::size_t selections = left_out.size();
  if (na < 2) {
    SpatialStructureResult r;
    r.message = "fewer than two antennas: no baselines";
    return std::vector<SpatialStructureResult>(selections, r);
  }
  // Cells: a new one wherever the window changes or a left-out span begins or ends.
  std::vector<bool> cut(nt + 1, false);
  for (const SampleSpan& span : left_out) {
    cut[span.first] = true;
    cut[span.last] = true;
  }
  std::vector<Cell> cells;
  std::vector<std::size_t> cell_of(nt);
  for (std::size_t k = 0; k < nt; ++k) {
    const std::size_t window =
        options.window_s > 0.0
            ? static_cast<std::size_t>(
                  std::max(0.0, std::floor((paths.time_s[k] - paths.time_s[0]) / options.window_s)))
            : 0;
    if (cells.empty() || cut[k] || window != cells.back().window) cells.push_back({window, k, k});
    cells.back().last = k + 1;
    cell_of[k] = cells.size() - 1;
  }
  // Pairs over threads; each pair's accumulator of each selection goes to its own slot.
  const std::vector<std::array<std::size_t, 2>> pairs = antenna_pairs(night, options.max_pairs);
  std::vector<Accumulator> accumulated(selections * pairs.size());
  const std::size_t workers = worker_count(options.threads, pairs.size());
  std::vector<std::size_t> skipped(selections * workers, 0);
  parallel_blocks(
      pairs.size(), workers, [&](std::size_t begin, std::size_t end, std::size_t worker) {
        std::vector<CellSums> sums(cells.size());
        for (std::size_t p = begin; p < end; ++p) {
          const std::size_t a = pairs[p][0], b = pairs[p][1];
          std::fill(sums.begin(), sums.end(), CellSums{});
          const double* la = paths.path_mm.data() + a * nt;
          const double* lb = paths.path_mm.data() + b * nt;
          for (std::size_t k = 0; k < nt; ++k) {
            const double d_m = (lb[k] - la[k]) * 1e-3;
            CellSums& c = sums[cell_of[k]];
            if (!std::isfinite(d_m)) {
              ++c.non_finite;
              continue;
            }
            if (c.count == 0) c.shift = d_m;
            const double x = d_m - c.shift;
            c.sum += x;
            c.sum_sq += x * x;
            ++c.count;
          }
          for (std::size_t j = 0; j < selections; ++j) {
            const SampleSpan span = left_out[j];
            std::size_t& skip = skipped[j * workers + worker];
            Accumulator acc;
            // A window's kept cells merged: count, mean and sum of squared deviations.
            std::size_t n = 0;
            double mean = 0.0, squares = 0.0;
            auto close_window = [&]() {
              if (n < options.min_samples) {
                skip += n;
              } else {
                acc.sum_sq_m2 += std::max(0.0, squares);
                acc.samples += n;
                acc.segments += 1;
              }
              n = 0;
              mean = squares = 0.0;
            };
            for (std::size_t c = 0; c < cells.size(); ++c) {
              if (c > 0 && cells[c].window != cells[c - 1].window) close_window();
              const CellSums& cs = sums[c];
              if (cells[c].first >= span.first && cells[c].last <= span.last &&
                  span.first < span.last) {
                skip += cs.count + cs.non_finite;
                continue;
              }
              skip += cs.non_finite;
              if (cs.count == 0) continue;
              const double m = static_cast<double>(cs.count);
              const double cell_mean = cs.shift + cs.sum / m;
              const double cell_squares = cs.sum_sq - cs.sum * cs.sum / m;
              if (n == 0) {
                mean = cell_mean;
                squares = cell_squares;
              } else {
                const double total = static_cast<double>(n + cs.count);
                const double delta = cell_mean - mean;
                squares += cell_squares + delta * delta * static_cast<double>(n) * m / total;
                mean += delta * m / total;
              }
              n += cs.count;
            }
            if (!cells.empty()) close_window();
            acc.noise_m2 = noise_variance_m2(a) + noise_variance_m2(b);
            accumulated[j * pairs.size() + p] = acc;
          }
        }
      });
  std::vector<SpatialStructureResult> results;
  results.reserve(selections);
  for (std::size_t j = 0; j < selections; ++j) {
    std::map<std::pair<int, int>, Accumulator> by_pair;
    for (std::size_t p = 0; p < pairs.size(); ++p) {
      const Accumulator& acc = accumulated[j * pairs.size() + p];
      if (acc.segments > 0)
        by_pair[{static_cast<int>(pairs[p][0]), static_cast<int>(pairs[p][1])}] = acc;
    }
    std::size_t skipped_samples = 0;
    for (std::size_t w = 0; w < workers; ++w) skipped_samples += skipped[j * workers + w];
    results.push_back(finish(night, by_pair, skipped_samples, "radiometer samples"));
  }
  return results;
}

}  // namespace detail

SpatialStructureResult radiometer_structure_function(const Night& night,
                                                     const AntennaPaths& paths,
                                                     const SpatialStructureOptions& options) {
  const detail::SampleSpan none;
  return detail::radiometer_structure_without(night, paths, options, {&none, 1}).front();
}

std::vector<double> antenna_path_noise_mm(const NightRetrieval& retrieval) {
  const std::size_t na = retrieval.antennas, nw = retrieval.windows;
  std::vector<double> out(na, std::nan(""));
  if (retrieval.path_noise_mm.size() != na * nw) return out;
  for (std::size_t a = 0; a < na; ++a) {
    double sum_sq = 0.0;
    std::size_t n = 0;
    for (std::size_t w = 0; w < nw; ++w) {
      const double s = retrieval.path_noise_mm[a * nw + w];
      if (!std::isfinite(s)) continue;
      sum_sq += s * s;
      ++n;
    }
    if (n > 0) out[a] = std::sqrt(sum_sq / static_cast<double>(n));
  }
  return out;
}

StructureFunctionEstimate bin_structure_function(const SpatialStructureResult& result,
                                                 double bins_per_decade) {
  require_in_range("bins_per_decade", bins_per_decade, 1e-3, 1e3);
  std::map<long, std::pair<double, double>> bins;  // bin -> (sum ln d, sum D)
  std::map<long, std::size_t> counts;
  for (const BaselineStructure& b : result.baselines) {
    if (!(b.baseline_m > 0.0) || !std::isfinite(b.structure_m2)) continue;
    const long bin = std::lround(std::floor(std::log10(b.baseline_m) * bins_per_decade));
    bins[bin].first += std::log(b.baseline_m);
    bins[bin].second += b.structure_m2;
    ++counts[bin];
  }
  StructureFunctionEstimate estimate;
  for (const auto& [bin, s] : bins) {
    const double n = static_cast<double>(counts[bin]);
    estimate.separation.push_back(std::exp(s.first / n));
    estimate.value_m2.push_back(s.second / n);
    estimate.pair_count.push_back(counts[bin]);
  }
  return estimate;
}

}  // namespace wvr
