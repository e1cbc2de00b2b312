#include "wvr/calibration.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <limits>
#include <map>
#include <memory>
#include <numbers>
#include <sstream>
#include <unordered_map>

#include "core/parallel_for.hpp"
#include "core/phase_wrap.hpp"
#include "correction/scaling_rows.hpp"
#include "correction/scaling_solver.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {

void CalibrationOptions::validate() const {
  require_in_range("antenna_scale_prior_sigma", antenna_scale_prior_sigma, 1e-6, 10.0);
  require_in_range("segment_s", segment_s, 0.0, 1e7, "s");
  if (reference_antenna < 0)
    throw InvalidInput("reference_antenna = " + std::to_string(reference_antenna) + " is negative");
  require_in_range("loss_scale", loss_scale, 1e-3, 2.0);
  require_in_range("scale_search_min", scale_search_min, 0.0, 10.0);
  require_in_range("scale_search_max", scale_search_max, scale_search_min + 1e-6, 20.0);
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " is negative");
  if (max_iterations < 1)
    throw InvalidInput("max_iterations = " + std::to_string(max_iterations) + " must be positive");
}

const char* to_string(AntennaScaling scaling) {
  switch (scaling) {
    case AntennaScaling::kChosenByData:
      return "chosen by data";
    case AntennaScaling::kOneForArray:
      return "one for the array";
    case AntennaScaling::kPerAntenna:
      return "per antenna";
  }
  return "unknown";
}

const char* to_string(CalibrationStatus status) {
  switch (status) {
    case CalibrationStatus::kConverged:
      return "converged";
    case CalibrationStatus::kNoConvergence:
      return "no convergence";
    case CalibrationStatus::kNoData:
      return "no calibrator data";
    case CalibrationStatus::kSolverFailure:
      return "solver failure";
  }
  return "unknown";
}

std::string CalibrationResult::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": scale " << scale << " +/- " << scale_sigma << ", " << rows_used
      << " phase rows (" << rows_skipped << " skipped)";
  if (segment_scale.size() > 1) out << ", " << segment_scale.size() << " segments";
  out << (per_antenna_scale ? ", a scale per antenna" : ", one scale for the array");
  if (std::isfinite(antenna_scale_statistic))
    out << " (test " << antenna_scale_statistic << " against " << antenna_scale_threshold << ")";
  out << ", " << iterations << " iterations";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

namespace {

using detail::AntennaRow;
using detail::Row;
using FitRows = detail::ScalingRows;
using FitParameters = detail::ScalingParameters;

constexpr double kTwoPi = 2.0 * std::numbers::pi;

double interpolate_path(const AntennaPaths& paths, std::size_t antenna, double t, bool& ok) {
  const std::vector<double>& times = paths.time_s;
  const std::size_t nt = times.size();
  auto it = std::lower_bound(times.begin(), times.end(), t);
  ok = false;
  if (it == times.end()) return 0.0;
  std::size_t j = static_cast<std::size_t>(it - times.begin());
  const double* path = &paths.path_mm[antenna * nt];
  if (*it == t) {
    ok = std::isfinite(path[j]);
    return path[j];
  }
  if (j == 0) return 0.0;
  const double f = (t - times[j - 1]) / (times[j] - times[j - 1]);
  const double value = (1 - f) * path[j - 1] + f * path[j];
  ok = std::isfinite(value);
  return value;
}

// One usable baseline phase of an integration, before reduction.
struct BaselinePhase {
  std::uint32_t a, b;
  double phase_rad, path_a_mm, path_b_mm;
};

// Wrap-aware least-squares antenna phases of one integration: minimises
// sum |e^i phi_ab - e^i (psi_b - psi_a)|^2 over psi with psi_root = 0, by circular-mean sweeps
// (each sweep sets every psi_c to its optimum with the others fixed, so the cost never rises)
// from a spanning tree of the baselines. Antennas outside the root's connected part get NaN.
class AntennaPhaseReduction {
 public:
  explicit AntennaPhaseReduction(std::size_t antennas) : local_(antennas, -1) {}
  std::size_t antenna_count() const { return local_.size(); }

  // `antennas` receives the integration's antennas (root first), `phase_rad` their phases.
  void reduce(const std::vector<BaselinePhase>& rows,
              std::uint32_t root,
              std::vector<std::uint32_t>& antennas,
              std::vector<double>& phase_rad) {
    antennas.clear();
    auto add = [&](std::uint32_t ant) {
      if (local_[ant] < 0) {
        local_[ant] = static_cast<int>(antennas.size());
        antennas.push_back(ant);
      }
    };
    add(root);
    for (const BaselinePhase& r : rows) {
      add(r.a);
      add(r.b);
    }
    auto local = [&](std::uint32_t ant) { return static_cast<std::size_t>(local_[ant]); };
    const std::size_t n = antennas.size();
    // Incidence lists (compressed): for antenna c, each row touching it.
    start_.assign(n + 1, 0);
    for (const BaselinePhase& r : rows) {
      ++start_[local(r.a) + 1];
      ++start_[local(r.b) + 1];
    }
    for (std::size_t c = 0; c < n; ++c) start_[c + 1] += start_[c];
    // Beside each incidence: the antenna at the row's other end and the row's phasor as seen
    // from this end (psi_other - phi from a, psi_other + phi from b), so that the sweeps below
    // read contiguous memory.
    incident_.resize(2 * rows.size());
    neighbour_.resize(2 * rows.size());
    neighbour_phasor_.resize(2 * rows.size());
    fill_ = start_;
    for (std::size_t i = 0; i < rows.size(); ++i) {
      const std::size_t a = local(rows[i].a), b = local(rows[i].b);
      const double c = std::cos(rows[i].phase_rad), s = std::sin(rows[i].phase_rad);
      const std::size_t from_a = fill_[a]++, from_b = fill_[b]++;
      incident_[from_a] = i;
      neighbour_[from_a] = b;
      neighbour_phasor_[from_a] = {c, -s};
      incident_[from_b] = i;
      neighbour_[from_b] = a;
      neighbour_phasor_[from_b] = {c, s};
    }
    // Spanning tree from the root: psi_b = psi_a + phi_ab.
    phase_rad.assign(n, std::nan(""));
    phase_rad[0] = 0.0;
    queue_.assign(1, 0);
    for (std::size_t q = 0; q < queue_.size(); ++q) {
      const std::size_t c = queue_[q];
      for (std::size_t k = start_[c]; k < start_[c + 1]; ++k) {
        const BaselinePhase& r = rows[incident_[k]];
        const bool c_is_a = local(r.a) == c;
        const std::size_t other = local(c_is_a ? r.b : r.a);
        if (!std::isnan(phase_rad[other])) continue;
        phase_rad[other] = std::remainder(
            c_is_a ? phase_rad[c] + r.phase_rad : phase_rad[c] - r.phase_rad, kTwoPi);
        queue_.push_back(other);
      }
    }
    // Circular-mean sweeps over the connected antennas, the root included, then the whole
    // solution turned so that the root has phase 0. (Held at 0 during the sweeps, the root
    // would leave the rotation of all other antennas against it to converge by a factor of
    // about (n - 2) / (n - 1) per sweep; left free, that rotation is the gauge and the other
    // modes converge within a few sweeps. The stationary points are the same: the cost is
    // invariant under a common rotation.) Phases are carried as unit phasors (each row's once,
    // each antenna's as it changes): a sweep costs complex multiplications, not a sine and
    // cosine per row end.
    phasor_.assign(n, {1.0, 0.0});
    for (std::size_t c : queue_) phasor_[c] = {std::cos(phase_rad[c]), std::sin(phase_rad[c])};
    constexpr int kMaxSweeps = 200;
    constexpr double kTolerance_rad = 1e-12;  // as the chord between successive phasors
    for (int sweep = 0; sweep < kMaxSweeps; ++sweep) {
      double largest_change = 0.0;
      for (std::size_t c : queue_) {
        double re = 0.0, im = 0.0;
        for (std::size_t k = start_[c]; k < start_[c + 1]; ++k) {
          const std::array<double, 2>& z = phasor_[neighbour_[k]];
          const std::array<double, 2>& u = neighbour_phasor_[k];
          re += z[0] * u[0] - z[1] * u[1];
          im += z[1] * u[0] + z[0] * u[1];
        }
        const double length = std::sqrt(re * re + im * im);
        // No direction at all (atan2(0, 0) = 0): phase 0.
        const std::array<double, 2> updated = length > 0.0
                                                  ? std::array<double, 2>{re / length, im / length}
                                                  : std::array<double, 2>{1.0, 0.0};
        const double d_re = updated[0] - phasor_[c][0], d_im = updated[1] - phasor_[c][1];
        largest_change = std::max(largest_change, std::sqrt(d_re * d_re + d_im * d_im));
        phasor_[c] = updated;
      }
      if (largest_change < kTolerance_rad) break;
    }
    const std::array<double, 2> root_phasor = phasor_[0];
    for (std::size_t q = 1; q < queue_.size(); ++q) {
      const std::array<double, 2>& z = phasor_[queue_[q]];  // z times conj(root)
      phase_rad[queue_[q]] = std::atan2(z[1] * root_phasor[0] - z[0] * root_phasor[1],
                                        z[0] * root_phasor[0] + z[1] * root_phasor[1]);
    }
    for (std::uint32_t ant : antennas) local_[ant] = -1;
  }

 private:
  std::vector<int> local_;  // [antenna] index within the current integration, or -1
  std::vector<std::size_t> start_, fill_, incident_, queue_;
  std::vector<std::size_t> neighbour_;
  std::vector<std::array<double, 2>> neighbour_phasor_, phasor_;  // (cos, sin)
};

// Adds one integration's usable baseline phases (one time and frequency) to `fit`.
void add_integration(const std::vector<BaselinePhase>& phases,
                     double k_rad_per_mm,
                     std::uint32_t scan,
                     std::uint32_t segment,
                     std::uint32_t reference,
                     ScalingSolveForm form,
                     AntennaPhaseReduction& reduction,
                     FitRows& fit) {
  if (phases.empty()) return;
  auto has_reference = [&](const BaselinePhase& p) { return p.a == reference || p.b == reference; };
  if (form == ScalingSolveForm::kBaselinePhases ||
      std::all_of(phases.begin(), phases.end(), has_reference)) {
    for (const BaselinePhase& p : phases) {
      fit.rows.push_back(
          {p.phase_rad, k_rad_per_mm, p.path_a_mm, p.path_b_mm, p.a, p.b, scan, segment});
    }
    fit.baseline_rows_used += phases.size();
    return;
  }
  // Root: the reference antenna when present, else the antenna of the most baselines (the
  // lowest index of equals). Per-antenna tables are vectors: maps cost more than the reduction.
  const bool reference_present = std::any_of(phases.begin(), phases.end(), has_reference);
  const std::size_t na = reduction.antenna_count();
  std::vector<std::size_t> degree(na, 0);
  std::vector<double> path_mm(na, std::nan(""));
  for (const BaselinePhase& p : phases) {
    ++degree[p.a];
    ++degree[p.b];
    path_mm[p.a] = p.path_a_mm;
    path_mm[p.b] = p.path_b_mm;
  }
  std::uint32_t root = reference;
  if (!reference_present)
    root =
        static_cast<std::uint32_t>(std::max_element(degree.begin(), degree.end()) - degree.begin());
  std::vector<std::uint32_t> antennas;
  std::vector<double> psi;
  reduction.reduce(phases, root, antennas, psi);
  std::vector<double> antenna_phase(na, std::nan(""));
  std::vector<std::uint32_t> phased;  // antennas with a phase, in increasing order
  for (std::size_t c = 0; c < antennas.size(); ++c) {
    if (std::isnan(psi[c])) continue;
    antenna_phase[antennas[c]] = psi[c];
    phased.push_back(antennas[c]);
  }
  std::sort(phased.begin(), phased.end());
  std::size_t used = 0;
  for (const BaselinePhase& p : phases) used += std::isnan(antenna_phase[p.a]) ? 0 : 1;
  fit.baseline_rows_used += used;
  fit.baseline_rows_skipped += phases.size() - used;
  if (phased.size() < 2) return;
  const auto integration = static_cast<std::uint32_t>(fit.integrations.size());
  fit.integrations.push_back(
      {1.0 + 2.0 * static_cast<double>(used) / static_cast<double>(phased.size()),
       reference_present ? path_mm[reference] : std::nan("")});
  for (std::uint32_t antenna : phased) {
    fit.antenna_rows.push_back({antenna_phase[antenna], k_rad_per_mm, path_mm[antenna], antenna,
                                scan, segment, integration});
  }
}

// What the rows of the fit are built from.
struct RowSource {
  const Night& night;
  const AntennaPaths& paths;
  const std::vector<std::size_t>& calibrator_scans;  // indices into night.scans, in time order
  const PhasePerPath& phase_per_path;
  const CalibrationOptions& options;
  double t0;
  std::size_t reference;
};

// The calibrator scan that may hold time t, from the one that held the previous time (rows are
// sorted by time; a NaN time leaves it where it is).
std::size_t advance_scan_cursor(const RowSource& source, std::size_t cursor, double t) {
  const std::vector<std::size_t>& scans = source.calibrator_scans;
  while (cursor < scans.size() && source.night.scans[scans[cursor]].stop_s <= t) ++cursor;
  return cursor;
}

// Adds the calibrator phase rows [begin, end) (whole time groups) to `fit`, one integration
// (time and frequency) at a time; `scan_cursor` is the calibrator scan a pass over the rows
// before `begin` would have reached.
void add_calibrator_rows(const RowSource& source,
                         std::size_t begin,
                         std::size_t end,
                         std::size_t scan_cursor,
                         FitRows& fit) {
  const Night& night = source.night;
  const CalibratorPhases& cp = night.calibrator_phases;
  const std::size_t na = night.antenna_count();
  const std::vector<std::size_t>& calibrator_scans = source.calibrator_scans;
  std::map<double, double> k_cache;
  auto k_at = [&](double freq_ghz) {
    auto k = k_cache.find(freq_ghz);
    if (k == k_cache.end()) {
      const double factor = source.phase_per_path(freq_ghz);
      k = k_cache
              .emplace(freq_ghz,
                       kTwoPi * freq_ghz * 1e9 / constants::speed_of_light_m_per_s * 1e-3 * factor)
              .first;
    }
    return k->second;
  };
  AntennaPhaseReduction reduction(na);
  std::map<double, std::vector<BaselinePhase>> by_freq;  // the current integration
  std::size_t i = begin;
  while (i < end) {
    const double t = cp.time_s[i];
    scan_cursor = advance_scan_cursor(source, scan_cursor, t);
    const bool in_scan = scan_cursor < calibrator_scans.size() &&
                         t >= night.scans[calibrator_scans[scan_cursor]].start_s;
    for (auto& entry : by_freq) entry.second.clear();
    // Rows of one time; a NaN time is a batch of its own (and unusable: no path at it).
    do {
      const auto [ia, ib] = cp.antenna_pair[i];
      bool usable = in_scan && ia >= 0 && ib >= 0 && static_cast<std::size_t>(ia) < na &&
                    static_cast<std::size_t>(ib) < na && ia != ib &&
                    std::isfinite(cp.phase_rad[i]) && cp.freq_ghz[i] > 0.0 &&
                    std::isfinite(cp.freq_ghz[i]);
      BaselinePhase p{};
      if (usable) {
        bool ok_a = false, ok_b = false;
        p.a = static_cast<std::uint32_t>(ia);
        p.b = static_cast<std::uint32_t>(ib);
        p.path_a_mm = interpolate_path(source.paths, p.a, t, ok_a);
        p.path_b_mm = interpolate_path(source.paths, p.b, t, ok_b);
        p.phase_rad = cp.phase_rad[i];
        usable = ok_a && ok_b;
      }
      if (usable) {
        by_freq[cp.freq_ghz[i]].push_back(p);
      } else {
        ++fit.baseline_rows_skipped;
      }
      ++i;
    } while (i < end && cp.time_s[i] == t);
    if (!in_scan) continue;
    const double segment_s = source.options.segment_s;
    const std::size_t segment =
        segment_s > 0.0
            ? static_cast<std::size_t>(std::max(0.0, std::floor((t - source.t0) / segment_s)))
            : 0;
    fit.scans = std::max(fit.scans, scan_cursor + 1);
    fit.segments = std::max(fit.segments, segment + 1);
    for (const auto& [freq, phases] : by_freq) {
      add_integration(phases, k_at(freq), static_cast<std::uint32_t>(scan_cursor),
                      static_cast<std::uint32_t>(segment),
                      static_cast<std::uint32_t>(source.reference), source.options.form, reduction,
                      fit);
    }
  }
}

// Grid search of the array scale with closed-form offsets: the 1 - cos cost summed over
// (scan, pair) groups is n - |sum exp(i theta)| at each group's circular-mean offset. Reduced
// integrations enter as antenna phases against the reference (where it took part).
class StartSearch {
 public:
  struct GroupKey {
    std::uint32_t scan, a, b;
  };

  StartSearch(const FitRows& fit, std::size_t antennas, std::uint32_t reference) : fit_(fit) {
    std::unordered_map<std::uint64_t, std::uint32_t> ids;
    auto id = [&](std::uint32_t scan, std::uint32_t a, std::uint32_t b) {
      const std::uint64_t key = (static_cast<std::uint64_t>(scan) * antennas + a) * antennas + b;
      auto [it, inserted] = ids.emplace(key, static_cast<std::uint32_t>(keys_.size()));
      if (inserted) keys_.push_back({scan, a, b});
      return it->second;
    };
    row_group_.reserve(fit.rows.size());
    for (const Row& r : fit.rows) row_group_.push_back(id(r.scan, r.a, r.b));
    antenna_group_.reserve(fit.antenna_rows.size());
    for (const AntennaRow& r : fit.antenna_rows) {
      const bool usable =
          r.antenna != reference && !std::isnan(fit.integrations[r.integration].reference_path_mm);
      antenna_group_.push_back(usable ? id(r.scan, reference, r.antenna) : kNoGroup);
    }
  }

  // Cost at `scale`; `sums` receives each group's (sum cos, sum sin).
  double cost(double scale, std::vector<std::pair<double, double>>& sums) const {
    sums.assign(keys_.size(), {0.0, 0.0});
    double n = 0.0;
    for (std::size_t i = 0; i < fit_.rows.size(); ++i) {
      const Row& r = fit_.rows[i];
      const double theta = r.phase_rad - r.k_rad_per_mm * scale * (r.path_b_mm - r.path_a_mm);
      sums[row_group_[i]].first += std::cos(theta);
      sums[row_group_[i]].second += std::sin(theta);
      n += 1.0;
    }
    for (std::size_t i = 0; i < fit_.antenna_rows.size(); ++i) {
      if (antenna_group_[i] == kNoGroup) continue;
      const AntennaRow& r = fit_.antenna_rows[i];
      const double theta =
          r.phase_rad -
          r.k_rad_per_mm * scale * (r.path_mm - fit_.integrations[r.integration].reference_path_mm);
      sums[antenna_group_[i]].first += std::cos(theta);
      sums[antenna_group_[i]].second += std::sin(theta);
      n += 1.0;
    }
    double total = n;
    for (const auto& s : sums) total -= std::hypot(s.first, s.second);
    return total;
  }

  // The grid scale (step 0.01) of least cost, the first of equals. Blocks of grid points over
  // threads; within a block each row's phasor is rotated from one grid point to the next by a
  // complex multiplication instead of a sine and cosine per point.
  double best_scale(double min_scale, double max_scale, int threads) const {
    constexpr double kStep = 0.01;
    std::vector<double> grid;
    for (double s = min_scale; s <= max_scale + 1e-12; s += kStep) grid.push_back(s);
    std::vector<double> costs(grid.size());
    const std::size_t blocks = (grid.size() + kGridBlock - 1) / kGridBlock;
    detail::parallel_blocks(blocks, detail::worker_count(threads, blocks),
                            [&](std::size_t begin, std::size_t end, std::size_t) {
                              std::vector<std::complex<double>> sums;
                              for (std::size_t b = begin; b < end; ++b) {
                                const std::size_t first = b * kGridBlock;
                                const std::size_t width = std::min(kGridBlock, grid.size() - first);
                                block_costs(grid[first], kStep, width, sums, &costs[first]);
                              }
                            });
    double best = 1.0, best_cost = std::numeric_limits<double>::infinity();
    for (std::size_t g = 0; g < grid.size(); ++g) {
      if (costs[g] < best_cost) {
        best_cost = costs[g];
        best = grid[g];
      }
    }
    return best;
  }

  const std::vector<GroupKey>& keys() const { return keys_; }

 private:
  static constexpr std::uint32_t kNoGroup = std::numeric_limits<std::uint32_t>::max();
  static constexpr std::size_t kGridBlock = 16;

  // Costs at scales first + j step, j < width (<= kGridBlock); `sums` is scratch.
  void block_costs(double first,
                   double step,
                   std::size_t width,
                   std::vector<std::complex<double>>& sums,
                   double* costs) const {
    sums.assign(keys_.size() * kGridBlock, {0.0, 0.0});
    double n = 0.0;
    // A row with phase theta(s) = phase - k s d: its phasor at the first scale, turned by
    // exp(-i k d step) from each scale to the next.
    const auto add = [&](std::uint32_t group, double phase_rad, double k_times_d) {
      double re = std::cos(phase_rad - k_times_d * first);
      double im = std::sin(phase_rad - k_times_d * first);
      const double turn_re = std::cos(k_times_d * step), turn_im = -std::sin(k_times_d * step);
      std::complex<double>* out = &sums[group * kGridBlock];
      for (std::size_t j = 0; j < width; ++j) {
        out[j] += std::complex<double>(re, im);
        // Written out: std::complex's operator*= guards against infinities at every step.
        const double next_re = re * turn_re - im * turn_im;
        im = re * turn_im + im * turn_re;
        re = next_re;
      }
      n += 1.0;
    };
    for (std::size_t i = 0; i < fit_.rows.size(); ++i) {
      const Row& r = fit_.rows[i];
      add(row_group_[i], r.phase_rad, r.k_rad_per_mm * (r.path_b_mm - r.path_a_mm));
    }
    for (std::size_t i = 0; i < fit_.antenna_rows.size(); ++i) {
      if (antenna_group_[i] == kNoGroup) continue;
      const AntennaRow& r = fit_.antenna_rows[i];
      add(antenna_group_[i], r.phase_rad,
          r.k_rad_per_mm * (r.path_mm - fit_.integrations[r.integration].reference_path_mm));
    }
    for (std::size_t j = 0; j < width; ++j) {
      double total = n;
      for (std::size_t g = 0; g < keys_.size(); ++g) total -= std::abs(sums[g * kGridBlock + j]);
      costs[j] = total;
    }
  }

  const FitRows& fit_;
  std::vector<GroupKey> keys_;
  std::vector<std::uint32_t> row_group_, antenna_group_;
};

// One solve of the scaling, with one ratio per antenna free (under the prior) or all held at 1.
class ScalingFit {
 public:
  ScalingFit(const FitRows& fit,
             FitParameters start,
             std::size_t antennas,
             std::size_t reference,
             bool per_antenna,
             const CalibrationOptions& options)
      : fit_(fit),
        p_(std::move(start)),
        na_(antennas),
        reference_(reference),
        per_antenna_(per_antenna),
        solver_(fit, settings(antennas, reference, per_antenna, options)) {
    for (std::size_t a = 0; a < na_; ++a) scaled_antennas_ += solver_.ratio_free(a) ? 1 : 0;
  }

  void solve() { summary_ = solver_.solve(p_); }

  // Converged, or stopped at the iteration limit (a usable solution, reported as such).
  bool usable() const { return summary_.termination != detail::ScalingTermination::kFailure; }
  std::size_t scaled_antennas() const { return scaled_antennas_; }

  // Lag-one correlation of the wrapped phase residuals of successive rows of one baseline (or
  // antenna phase) within a calibrator scan.
  double lag_one_correlation() const {
    std::unordered_map<std::uint64_t, double> previous;
    double sum_xy = 0.0, sum_xx = 0.0;
    auto add = [&](std::uint64_t series, double residual_rad) {
      const auto [it, first] = previous.try_emplace(series, residual_rad);
      if (!first) {
        sum_xy += it->second * residual_rad;
        it->second = residual_rad;
      }
      sum_xx += residual_rad * residual_rad;
    };
    auto offset = [&](std::uint32_t scan, std::uint32_t ant) {
      return ant == reference_ ? 0.0 : p_.offsets[scan * na_ + ant];
    };
    for (const Row& r : fit_.rows) {
      const double model = r.k_rad_per_mm * p_.segment_scale[r.segment] *
                               (p_.ratio[r.b] * r.path_b_mm - p_.ratio[r.a] * r.path_a_mm) +
                           offset(r.scan, r.b) - offset(r.scan, r.a);
      add((std::uint64_t{r.scan} * na_ + r.a) * na_ + r.b,
          detail::wrap_phase_rad(r.phase_rad - model));
    }
    for (const AntennaRow& r : fit_.antenna_rows) {
      const double model =
          r.k_rad_per_mm * p_.segment_scale[r.segment] * p_.ratio[r.antenna] * r.path_mm +
          offset(r.scan, r.antenna) + p_.common[r.integration];
      add((std::uint64_t{r.scan} * na_ + r.antenna) * na_ + r.antenna,
          detail::wrap_phase_rad(r.phase_rad - model));
    }
    return sum_xx > 0.0 ? sum_xy / sum_xx : 0.0;
  }

  // The residual cost without the prior's.
  double data_cost() const { return summary_.final_cost - summary_.prior_cost; }

  // Status, scales and their uncertainties (offsets and common phases marginalised) into
  // `result`.
  void write(double t0,
             double segment_s,
             const std::vector<std::size_t>& segment_number,
             CalibrationResult& result) const {
    result.iterations = summary_.iterations;
    result.final_cost = summary_.final_cost;
    result.per_antenna_scale = per_antenna_;
    switch (summary_.termination) {
      case detail::ScalingTermination::kConverged:
        result.status = CalibrationStatus::kConverged;
        break;
      case detail::ScalingTermination::kIterationLimit:
        result.status = CalibrationStatus::kNoConvergence;
        result.message = summary_.message;
        break;
      case detail::ScalingTermination::kFailure:
        result.status = CalibrationStatus::kSolverFailure;
        result.message = summary_.message;
        return;
    }
    const std::vector<double>& segment_scale = p_.segment_scale;
    const std::vector<double>& ratio = p_.ratio;
    Eigen::MatrixXd covariance;
    const bool have_covariance = solver_.global_covariance(p_, covariance);
    auto cov = [&](std::ptrdiff_t x, std::ptrdiff_t y) {
      return have_covariance ? covariance(x, y) : std::nan("");
    };
    if (!have_covariance)
      result.message +=
          (result.message.empty() ? "" : "; ") + std::string("covariance not available");

    // NaN (no covariance) stays NaN: std::max(0.0, NaN) would report a zero uncertainty.
    auto standard_deviation = [](double variance) {
      return std::isnan(variance) ? variance : std::sqrt(std::max(0.0, variance));
    };
    for (std::size_t s = 0; s < segment_scale.size(); ++s) {
      const std::ptrdiff_t is = solver_.segment_index(s);
      result.segment_start_s.push_back(t0 + segment_s * static_cast<double>(segment_number[s]));
      result.segment_scale.push_back(segment_scale[s]);
      result.segment_scale_sigma.push_back(standard_deviation(cov(is, is)));
    }
    result.scale = segment_scale[0];
    result.scale_sigma = result.segment_scale_sigma[0];
    const std::ptrdiff_t first = solver_.segment_index(0);
    for (std::size_t a = 0; a < na_; ++a) {
      result.antenna_scale[a] = segment_scale[0] * ratio[a];
      const std::ptrdiff_t ia = solver_.ratio_index(a);
      if (ia < 0) {
        result.antenna_scale_sigma[a] = result.scale_sigma;
        continue;
      }
      // s_a = S r_a: first-order propagation with the S-r_a correlation.
      const double vs = cov(first, first);
      const double vr = cov(ia, ia);
      const double csr = cov(first, ia);
      const double var = ratio[a] * ratio[a] * vs + segment_scale[0] * segment_scale[0] * vr +
                         2.0 * segment_scale[0] * ratio[a] * csr;
      result.antenna_scale_sigma[a] = standard_deviation(var);
    }
  }

 private:
  static detail::ScalingSolveSettings settings(std::size_t antennas,
                                               std::size_t reference,
                                               bool per_antenna,
                                               const CalibrationOptions& options) {
    detail::ScalingSolveSettings settings;
    settings.antennas = antennas;
    settings.reference = reference;
    settings.loss_scale = options.loss_scale;
    settings.per_antenna = per_antenna;
    settings.ratio_prior_sigma = options.antenna_scale_prior_sigma;
    settings.max_iterations = options.max_iterations;
    // The robust chord cost converges linearly (each step takes about half the remaining
    // decrease). A relative cost change of 1e-7 leaves the scale within 1e-4 of its sigma of
    // the 1e-10 solution (64 antennas x 8 h: 12 iterations instead of 21, scale 2e-7 apart,
    // measured with Ceres' solve of the same cost; this solver also stops after 12).
    settings.function_tolerance = 1e-7;
    settings.parameter_tolerance = 1e-10;
    return settings;
  }

  const FitRows& fit_;
  FitParameters p_;
  std::size_t na_, reference_;
  bool per_antenna_;
  detail::ScalingSolver solver_;
  std::size_t scaled_antennas_ = 0;
  detail::ScalingSolveSummary summary_;
};

}  // namespace

CalibrationResult solve_scaling(const Night& night,
                                const AntennaPaths& paths,
                                const PhasePerPath& phase_per_path,
                                const CalibrationOptions& options) {
  options.validate();
  const std::size_t na = night.antenna_count();
  if (paths.antennas != na || paths.path_mm.size() != na * paths.time_s.size()) {
    throw InvalidInput("paths: " + std::to_string(paths.antennas) + " antennas x " +
                       std::to_string(paths.time_s.size()) + " times do not match the night's " +
                       std::to_string(na) + " antennas");
  }
  const std::size_t ref = static_cast<std::size_t>(options.reference_antenna);
  if (ref >= na) {
    throw InvalidInput("reference_antenna = " + std::to_string(ref) +
                       " is not an antenna index below " + std::to_string(na));
  }
  CalibrationResult result;
  result.antenna_scale.assign(na, 1.0);
  result.antenna_scale_sigma.assign(na, 0.0);

  // Calibrator scans and rows, one integration (time and frequency) at a time.
  std::vector<std::size_t> calibrator_scans;
  for (std::size_t s = 0; s < night.scans.size(); ++s) {
    if (night.scans[s].intent == ScanIntent::kCalibrator) calibrator_scans.push_back(s);
  }
  const CalibratorPhases& cp = night.calibrator_phases;
  const double t0 = paths.time_s.empty() ? 0.0 : paths.time_s.front();
  const RowSource source{night, paths, calibrator_scans, phase_per_path, options, t0, ref};
  // Parts of whole time groups over threads (each integration's reduction is independent of
  // the others), concatenated in time order: the rows do not depend on the thread count.
  constexpr std::size_t kPhaseRowsPerPart = std::size_t{1} << 16;
  const std::size_t phase_rows = cp.time_s.size();
  const std::size_t parts =
      detail::worker_count(options.threads, phase_rows / kPhaseRowsPerPart + 1);
  std::vector<std::size_t> bounds(parts + 1, phase_rows);
  bounds[0] = 0;
  for (std::size_t w = 1; w < parts; ++w) {
    std::size_t b = std::max(bounds[w - 1], phase_rows * w / parts);
    while (b > 0 && b < phase_rows && cp.time_s[b] == cp.time_s[b - 1]) ++b;
    bounds[w] = b;
  }
  // Each part's first calibrator scan, as a pass over the rows before it leaves it.
  std::vector<std::size_t> first_scan(parts, 0);
  std::size_t cursor = 0;
  for (std::size_t w = 1; w < parts; ++w) {
    for (std::size_t k = bounds[w - 1]; k < bounds[w]; ++k)
      cursor = advance_scan_cursor(source, cursor, cp.time_s[k]);
    first_scan[w] = cursor;
  }
  std::vector<FitRows> part_rows(parts);
  detail::parallel_blocks(parts, parts, [&](std::size_t begin, std::size_t end, std::size_t) {
    for (std::size_t w = begin; w < end; ++w)
      add_calibrator_rows(source, bounds[w], bounds[w + 1], first_scan[w], part_rows[w]);
  });
  FitRows fit = std::move(part_rows[0]);
  for (std::size_t w = 1; w < parts; ++w) {
    FitRows& part = part_rows[w];
    const auto integration_offset = static_cast<std::uint32_t>(fit.integrations.size());
    for (AntennaRow& r : part.antenna_rows) r.integration += integration_offset;
    fit.rows.insert(fit.rows.end(), part.rows.begin(), part.rows.end());
    fit.antenna_rows.insert(fit.antenna_rows.end(), part.antenna_rows.begin(),
                            part.antenna_rows.end());
    fit.integrations.insert(fit.integrations.end(), part.integrations.begin(),
                            part.integrations.end());
    fit.scans = std::max(fit.scans, part.scans);
    fit.segments = std::max(fit.segments, part.segments);
    fit.baseline_rows_used += part.baseline_rows_used;
    fit.baseline_rows_skipped += part.baseline_rows_skipped;
    part = FitRows{};
  }
  result.rows_used = fit.baseline_rows_used;
  result.rows_skipped = fit.baseline_rows_skipped;
  if (fit.rows.empty() && fit.antenna_rows.empty()) {
    result.message = calibrator_scans.empty() ? "the night has no calibrator scans"
                                              : "no usable calibrator phase rows";
    return result;
  }

  // Start values: the array scale from the grid, offsets at their circular means.
  const StartSearch search(fit, na, static_cast<std::uint32_t>(ref));
  const double best_scale =
      search.best_scale(options.scale_search_min, options.scale_search_max, options.threads);
  std::vector<std::pair<double, double>> sums;
  search.cost(best_scale, sums);

  // Parameters. Only segments holding rows get a scale (a segment shorter than the calibrator
  // cycle can fall entirely within target scans); they are renumbered in time order.
  std::map<std::size_t, std::size_t> segment_index;
  for (const Row& r : fit.rows) segment_index.emplace(r.segment, 0);
  for (const AntennaRow& r : fit.antenna_rows) segment_index.emplace(r.segment, 0);
  std::vector<std::size_t> segment_number;
  for (auto& [number, index] : segment_index) {
    index = segment_number.size();
    segment_number.push_back(number);
  }
  for (Row& r : fit.rows) r.segment = static_cast<std::uint32_t>(segment_index.at(r.segment));
  for (AntennaRow& r : fit.antenna_rows)
    r.segment = static_cast<std::uint32_t>(segment_index.at(r.segment));
  const std::size_t segments = segment_number.size();
  fit.segments = segments;
  std::vector<double> segment_scale(segments, best_scale);
  std::vector<double> offsets(fit.scans * na, 0.0);  // [scan, antenna]; the reference's stay 0
  for (std::size_t g = 0; g < search.keys().size(); ++g) {
    const auto& key = search.keys()[g];
    const double angle = std::atan2(sums[g].second, sums[g].first);
    if (key.a == ref && key.b != ref) offsets[key.scan * na + key.b] = angle;
    if (key.b == ref && key.a != ref) offsets[key.scan * na + key.a] = -angle;
  }
  // Common phases: the circular mean of each reduced integration's antenna residuals.
  std::vector<std::pair<double, double>> common_sum(fit.integrations.size(), {0.0, 0.0});
  for (const AntennaRow& r : fit.antenna_rows) {
    const double theta = r.phase_rad - r.k_rad_per_mm * best_scale * r.path_mm -
                         (r.antenna == ref ? 0.0 : offsets[r.scan * na + r.antenna]);
    common_sum[r.integration].first += std::cos(theta);
    common_sum[r.integration].second += std::sin(theta);
  }
  std::vector<double> common(fit.integrations.size());
  for (std::size_t n = 0; n < common.size(); ++n)
    common[n] = std::atan2(common_sum[n].second, common_sum[n].first);
  // Each row is one phase: fewer rows than free parameters (a scale per segment, an offset per
  // calibrator scan and antenna) leave the solve undetermined, and its zero residual would read
  // as a perfect fit.
  // (Reduced integrations add a common phase each.)
  const std::size_t free_parameters = segments + offsets.size() + fit.integrations.size();
  const std::size_t row_count = fit.rows.size() + fit.antenna_rows.size();
  if (row_count <= free_parameters) {
    result.message = std::to_string(row_count) + " usable calibrator phase rows cannot determine " +
                     std::to_string(free_parameters) +
                     " parameters (a scale per segment, a phase offset per scan and antenna)";
    return result;
  }

  const FitParameters start{segment_scale, std::vector<double>(na, 1.0), offsets, common};
  const int threads = static_cast<int>(detail::worker_count(options.threads, 64));
  std::unique_ptr<ScalingFit> kept;
  if (options.antenna_scaling == AntennaScaling::kChosenByData) {
    // Both fits from the same start, side by side on the stage's threads. Starting the
    // per-antenna fit from the array fit's solution would save it a few iterations but
    // serialise the two; the same start keeps the result independent of the thread count.
    std::unique_ptr<ScalingFit> array, per_antenna;
    detail::parallel_blocks(
        2, detail::worker_count(threads, 2), [&](std::size_t begin, std::size_t end, std::size_t) {
          for (std::size_t which = begin; which < end; ++which) {
            auto solved = std::make_unique<ScalingFit>(fit, start, na, ref, which == 1, options);
            solved->solve();
            (which == 1 ? per_antenna : array) = std::move(solved);
          }
        });
    if (!array->usable()) {
      kept = std::move(array);
    } else {
      // Independent rows: an AR(1) residual of lag-one correlation rho carries the information
      // of n (1 - rho) / (1 + rho) independent ones (common practice for correlated series).
      const double rho = std::clamp(per_antenna->lag_one_correlation(), 0.0, 0.999);
      const double n = static_cast<double>(row_count) * (1.0 - rho) / (1.0 + rho);
      const double data_cost_per_antenna = per_antenna->data_cost();
      result.antenna_scale_statistic =
          data_cost_per_antenna > 0.0 ? n * std::log(array->data_cost() / data_cost_per_antenna)
                                      : std::numeric_limits<double>::infinity();
      result.antenna_scale_threshold =
          static_cast<double>(per_antenna->scaled_antennas() - 1) * std::log(n);
      const bool significant = per_antenna->usable() && per_antenna->scaled_antennas() > 1 &&
                               result.antenna_scale_statistic > result.antenna_scale_threshold;
      kept = significant ? std::move(per_antenna) : std::move(array);
    }
  } else {
    kept = std::make_unique<ScalingFit>(
        fit, start, na, ref, options.antenna_scaling == AntennaScaling::kPerAntenna, options);
    kept->solve();
  }
  kept->write(t0, options.segment_s, segment_number, result);
  return result;
}

}  // namespace wvr
