// Paths of antennas without a radiometer sample, predicted from the others
// (wvr/path_prediction.hpp).
#include "wvr/path_prediction.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <sstream>
#include <unordered_map>

#include "streaming_corrector_kernel.hpp"
#include "wvr/error.hpp"
#include "wvr/streaming_corrector.hpp"

namespace wvr {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr std::uint8_t kRadiometerMissing = kCorrectorNoData | kCorrectorBadBrightness;

// One donor sample: antenna `antenna` at `lag_s` before the predicted time, which sits at
// (east_m, north_m) in the screen's frame at the predicted time.
struct Donor {
  std::size_t antenna = 0;
  double lag_s = 0.0;
  double east_m = 0.0, north_m = 0.0;
  double distance_m = 0.0;  // to the predicted antenna
};

// Kriging weights and variance for one subset of donors.
struct Kriging {
  Eigen::VectorXd weight;
  double variance_mm2 = kNaN;
  bool ok = false;
};

Kriging solve_kriging(const std::vector<Donor>& donors,
                      const std::vector<std::size_t>& subset,
                      const std::function<double(double)>& gamma_mm2) {
  const auto n = static_cast<Eigen::Index>(subset.size());
  Kriging k;
  if (n == 0) return k;
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(n + 1, n + 1);
  Eigen::VectorXd rhs(n + 1);
  for (Eigen::Index i = 0; i < n; ++i) {
    const Donor& a = donors[subset[static_cast<std::size_t>(i)]];
    for (Eigen::Index j = 0; j < i; ++j) {
      const Donor& b = donors[subset[static_cast<std::size_t>(j)]];
      m(i, j) = m(j, i) = gamma_mm2(std::hypot(a.east_m - b.east_m, a.north_m - b.north_m));
    }
    m(i, n) = m(n, i) = 1.0;
    rhs(i) = gamma_mm2(a.distance_m);
  }
  rhs(n) = 1.0;
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(m);
  if (!lu.isInvertible()) return k;
  const Eigen::VectorXd solution = lu.solve(rhs);
  k.weight = solution.head(n);
  k.variance_mm2 = std::max(0.0, solution.head(n).dot(rhs.head(n)) + solution(n));
  k.ok = std::isfinite(k.variance_mm2) && k.weight.allFinite();
  return k;
}

bool measured(const AntennaPaths& paths, std::size_t at) {
  return paths.flags[at] == 0 && std::isfinite(paths.path_mm[at]);
}

// Linear interpolation of antenna a's measured path at time t (NaN when a neighbouring sample
// is not measured or t is outside the series).
double path_at(const AntennaPaths& paths, std::size_t a, double time_s) {
  const std::vector<double>& t = paths.time_s;
  const std::size_t nt = t.size();
  const auto it = std::lower_bound(t.begin(), t.end(), time_s);
  if (it == t.end()) return kNaN;
  const auto k = static_cast<std::size_t>(it - t.begin());
  if (*it == time_s) return measured(paths, a * nt + k) ? paths.path_mm[a * nt + k] : kNaN;
  if (k == 0 || !measured(paths, a * nt + k) || !measured(paths, a * nt + k - 1)) return kNaN;
  const double f = (time_s - t[k - 1]) / (t[k] - t[k - 1]);
  return (1.0 - f) * paths.path_mm[a * nt + k - 1] + f * paths.path_mm[a * nt + k];
}

// [antenna, time]: 1 where the radiometer gave nothing usable, in a run of at least min_gap_s
// (a run's length is from its first to one sample past its last, so a single lost sample
// spans one sampling interval).
std::vector<std::uint8_t> samples_to_predict(const AntennaPaths& paths, double min_gap_s) {
  const std::size_t na = paths.antennas, nt = paths.time_s.size();
  std::vector<std::uint8_t> out(na * nt, 0);
  const double step_s =
      nt > 1 ? (paths.time_s.back() - paths.time_s.front()) / static_cast<double>(nt - 1) : 0.0;
  for (std::size_t a = 0; a < na; ++a) {
    std::size_t k = 0;
    while (k < nt) {
      if ((paths.flags[a * nt + k] & kRadiometerMissing) == 0) {
        ++k;
        continue;
      }
      std::size_t end = k;
      while (end < nt && (paths.flags[a * nt + end] & kRadiometerMissing) != 0) ++end;
      const double stop_s = end < nt ? paths.time_s[end] : paths.time_s[nt - 1] + step_s;
      if (stop_s - paths.time_s[k] >= min_gap_s)
        std::fill(out.begin() + static_cast<std::ptrdiff_t>(a * nt + k),
                  out.begin() + static_cast<std::ptrdiff_t>(a * nt + end), 1);
      k = end;
    }
  }
  return out;
}

}  // namespace

const char* to_string(PathPredictionMethod method) {
  return method == PathPredictionMethod::kNeighbours ? "neighbours" : "frozen_flow";
}

PathPredictionMethod path_prediction_method_from_string(const std::string& name) {
  if (name == "neighbours") return PathPredictionMethod::kNeighbours;
  if (name == "frozen_flow") return PathPredictionMethod::kFrozenFlow;
  throw InvalidInput("path prediction method '" + name + "' is not one of neighbours, frozen_flow");
}

void PathPredictionOptions::validate() const {
  if (donors < 1 || donors > 64)
    throw InvalidInput("donors = " + std::to_string(donors) + " is outside [1, 64]");
  require_in_range("max_lag_s", max_lag_s, 0.0, 1e5, "s");
  require_in_range("min_gap_s", min_gap_s, 0.0, 1e6, "s");
}

bool PredictedPaths::any() const {
  return std::any_of(predicted_samples.begin(), predicted_samples.end(),
                     [](std::size_t n) { return n > 0; });
}

std::string PredictedPaths::brief_report(const Night& night) const {
  std::ostringstream out;
  out << "path prediction (" << to_string(method) << "): ";
  bool first = true;
  for (std::size_t a = 0; a < predicted_samples.size(); ++a) {
    if (predicted_samples[a] == 0) continue;
    out << (first ? "" : ", ") << night.array.antenna_names[a] << " " << predicted_samples[a]
        << " samples (" << frozen_flow_samples[a] << " by frozen flow), expected residual "
        << std::lround(expected_residual_mm[a] * 1000.0) << " um";
    first = false;
  }
  if (first) out << "no sample predicted";
  if (!message.empty()) out << " (" << message << ")";
  return out.str();
}

PredictedPaths predict_missing_paths(const Night& night,
                                     const AntennaPaths& paths,
                                     const WindEstimate& wind,
                                     const std::function<double(double)>& structure_m2,
                                     const PathPredictionOptions& options) {
  options.validate();
  const std::size_t na = night.antenna_count(), nt = paths.time_s.size();
  if (paths.antennas != na || paths.path_mm.size() != na * nt || paths.flags.size() != na * nt)
    throw InvalidInput("paths have " + std::to_string(paths.antennas) + " antennas x " +
                       std::to_string(nt) + " times and " + std::to_string(paths.path_mm.size()) +
                       " values; the night has " + std::to_string(na) + " antennas");
  if (!structure_m2) throw InvalidInput("structure_m2 is empty: a structure function is needed");
  const bool flow = options.method == PathPredictionMethod::kFrozenFlow;
  const double ve = wind.east_m_s, vn = wind.north_m_s, v2 = ve * ve + vn * vn;
  if (flow && (!wind.ok() || !(v2 > 0.0)))
    throw InvalidInput("frozen-flow prediction needs a measured wind; the wind estimate is " +
                       std::string(to_string(wind.status)) + " (" + wind.message + ")");
  // m^2 -> mm^2, halved: the variogram.
  const auto gamma_mm2 = [&](double d_m) { return d_m > 0.0 ? 0.5e6 * structure_m2(d_m) : 0.0; };

  PredictedPaths out;
  out.method = options.method;
  out.paths = paths;
  out.sample_method.assign(na * nt, kPathMeasured);
  out.predicted_samples.assign(na, 0);
  out.frozen_flow_samples.assign(na, 0);
  out.expected_residual_mm.assign(na, kNaN);
  out.mean_donors.assign(na, 0.0);
  if (flow) {
    out.wind_speed_m_s = wind.speed_m_s;
    out.wind_direction_to_deg = wind.direction_to_deg;
  }
  const std::vector<std::uint8_t> wanted = samples_to_predict(paths, options.min_gap_s);
  const auto& pos = night.array.position_enu_m;
  for (std::size_t target = 0; target < na; ++target) {
    const auto begin = wanted.begin() + static_cast<std::ptrdiff_t>(target * nt);
    if (std::find(begin, begin + static_cast<std::ptrdiff_t>(nt), 1) ==
        begin + static_cast<std::ptrdiff_t>(nt))
      continue;
    // Donor samples in the screen's frame, nearest first.
    std::vector<Donor> donors;
    for (std::size_t a = 0; a < na; ++a) {
      if (a == target) continue;
      const double be = pos[target][0] - pos[a][0], bn = pos[target][1] - pos[a][1];
      donors.push_back({a, 0.0, pos[a][0], pos[a][1], std::hypot(be, bn)});
      if (!flow) continue;
      const double lag = (be * ve + bn * vn) / v2;
      if (lag <= 0.0 || lag > options.max_lag_s) continue;
      const double e = pos[a][0] + ve * lag, n = pos[a][1] + vn * lag;
      donors.push_back({a, lag, e, n, std::hypot(pos[target][0] - e, pos[target][1] - n)});
    }
    std::sort(donors.begin(), donors.end(),
              [](const Donor& x, const Donor& y) { return x.distance_m < y.distance_m; });
    if (donors.size() > options.donors) donors.resize(options.donors);
    // Each set of available donors has its own weights; a night mostly repeats a few sets.
    std::unordered_map<std::uint64_t, Kriging> cache;
    std::vector<double> values(donors.size());
    double variance_sum = 0.0, donor_sum = 0.0;
    std::size_t predicted = 0, skipped = 0;
    for (std::size_t k = 0; k < nt; ++k) {
      const std::size_t at = target * nt + k;
      if (!wanted[at]) continue;
      std::uint64_t mask = 0;
      std::vector<std::size_t> subset;
      bool lagged = false;
      for (std::size_t i = 0; i < donors.size(); ++i) {
        values[i] = path_at(paths, donors[i].antenna, paths.time_s[k] - donors[i].lag_s);
        if (std::isfinite(values[i])) {
          mask |= std::uint64_t{1} << i;
          subset.push_back(i);
          lagged = lagged || donors[i].lag_s > 0.0;
        }
      }
      auto found = cache.find(mask);
      if (found == cache.end())
        found = cache.emplace(mask, solve_kriging(donors, subset, gamma_mm2)).first;
      const Kriging& kr = found->second;
      if (!kr.ok) {
        ++skipped;
        continue;
      }
      double value = 0.0;
      for (std::size_t i = 0; i < subset.size(); ++i)
        value += kr.weight(static_cast<Eigen::Index>(i)) * values[subset[i]];
      out.paths.path_mm[at] = value;
      out.paths.flags[at] = 0;
      out.sample_method[at] = lagged ? kPathFromFrozenFlow : kPathFromNeighbours;
      out.frozen_flow_samples[target] += lagged ? 1 : 0;
      variance_sum += kr.variance_mm2;
      donor_sum += static_cast<double>(subset.size());
      ++predicted;
    }
    out.predicted_samples[target] = predicted;
    if (predicted > 0) {
      out.expected_residual_mm[target] = std::sqrt(variance_sum / static_cast<double>(predicted));
      out.mean_donors[target] = donor_sum / static_cast<double>(predicted);
    }
    if (skipped > 0)
      out.message += (out.message.empty() ? "" : "; ") + night.array.antenna_names[target] + ": " +
                     std::to_string(skipped) + " samples without a measured donor";
  }
  return out;
}

std::optional<PredictedPaths> predict_night_missing_paths(const Night& night,
                                                          const NightRetrieval& retrieval,
                                                          const AntennaPaths& paths,
                                                          const PathPredictionOptions& options) {
  options.validate();
  if (!options.enabled) return std::nullopt;
  const std::vector<std::uint8_t> wanted = samples_to_predict(paths, options.min_gap_s);
  if (std::find(wanted.begin(), wanted.end(), 1) == wanted.end()) return std::nullopt;

  SpatialStructureOptions structure_options;
  if (retrieval.antennas == night.antenna_count())
    structure_options.antenna_path_noise_mm = antenna_path_noise_mm(retrieval);
  const StructureFunctionEstimate binned =
      bin_structure_function(radiometer_structure_function(night, paths, structure_options));
  const SlabThicknessFit slab = fit_slab_thickness(binned.separation, binned.value_m2);
  std::function<double(double)> structure_m2;
  double thickness_m = 0.0;
  std::string structure_note;
  if (slab.ok()) {
    structure_m2 = [slab](double d) { return slab.evaluate_m2(d); };
    thickness_m = slab.thickness_m;
  } else {
    const BrokenPowerLawFit power_law = fit_broken_power_law(binned.separation, binned.value_m2);
    if (power_law.status == DiagnosticStatus::kOk ||
        power_law.status == DiagnosticStatus::kTooFewPoints) {
      structure_m2 = [power_law](double d) { return power_law.evaluate_m2(d); };
      structure_note = "slab fit failed (" + slab.message + "); broken power law used";
    }
  }
  if (!structure_m2) {
    PredictedPaths none;
    none.method = options.method;
    none.paths = paths;
    none.sample_method.assign(paths.path_mm.size(), kPathMeasured);
    none.predicted_samples.assign(paths.antennas, 0);
    none.frozen_flow_samples.assign(paths.antennas, 0);
    none.expected_residual_mm.assign(paths.antennas, kNaN);
    none.mean_donors.assign(paths.antennas, 0.0);
    none.message = "no path predicted: the radiometer structure function could not be fitted (" +
                   slab.message + ")";
    return none;
  }
  PathPredictionOptions used = options;
  WindEstimate wind;
  std::string wind_note;
  if (used.method == PathPredictionMethod::kFrozenFlow) {
    wind = estimate_wind(night, paths);
    if (!wind.ok() || !(wind.speed_m_s > 0.0)) {
      used.method = PathPredictionMethod::kNeighbours;
      wind_note = "no wind measured (" + wind.message + "): predicted from neighbours";
    }
  }
  PredictedPaths out = predict_missing_paths(night, paths, wind, structure_m2, used);
  out.structure_thickness_m = thickness_m;
  for (const std::string& note : {structure_note, wind_note})
    if (!note.empty()) out.message = note + (out.message.empty() ? "" : "; " + out.message);
  return out;
}

PathPredictionSummary summarize_path_prediction(const PredictedPaths& predicted,
                                                const CorrectionMetrics& metrics,
                                                const PhasePerPath& phase_per_path,
                                                double freq_ghz) {
  const std::size_t na = predicted.predicted_samples.size();
  if (metrics.antennas.size() != na)
    throw InvalidInput("correction metrics hold " + std::to_string(metrics.antennas.size()) +
                       " antennas; the path prediction " + std::to_string(na));
  require_in_range("freq_ghz", freq_ghz, 1.0, 2000.0, "GHz");
  PathPredictionSummary s;
  s.method = predicted.method;
  s.message = predicted.message;
  s.freq_ghz = freq_ghz;
  std::vector<double> healthy;
  for (std::size_t a = 0; a < na; ++a) {
    if (predicted.predicted_samples[a] > 0) continue;
    ++s.healthy_antennas;
    if (metrics.antennas[a].samples > 0) healthy.push_back(metrics.antennas[a].rms_after_deg);
  }
  if (healthy.empty()) {
    s.healthy_phase_rms_after_deg = kNaN;
  } else {
    std::sort(healthy.begin(), healthy.end());
    const std::size_t h = healthy.size();
    s.healthy_phase_rms_after_deg =
        h % 2 == 1 ? healthy[h / 2] : 0.5 * (healthy[h / 2 - 1] + healthy[h / 2]);
  }
  const double deg_per_mm = phase_per_path.phase_rad(1e-3, freq_ghz) * 180.0 / std::numbers::pi;
  for (std::size_t a = 0; a < na; ++a) {
    if (predicted.predicted_samples[a] == 0) continue;
    PredictedAntennaResidual r;
    r.antenna = a;
    r.predicted_samples = predicted.predicted_samples[a];
    r.frozen_flow_samples = predicted.frozen_flow_samples[a];
    r.expected_residual_mm = predicted.expected_residual_mm[a];
    r.expected_residual_deg = deg_per_mm * r.expected_residual_mm;
    r.expected_phase_rms_after_deg =
        std::hypot(s.healthy_phase_rms_after_deg, r.expected_residual_deg);
    r.phase_rms_after_deg =
        metrics.antennas[a].samples > 0 ? metrics.antennas[a].rms_after_deg : kNaN;
    s.antennas.push_back(r);
  }
  return s;
}

void apply_predicted_paths(PhaseCorrections& corrections, const PredictedPaths& predicted) {
  const std::size_t na = predicted.paths.antennas, nt = predicted.paths.time_s.size();
  if (corrections.time_s.size() != nt || corrections.path_mm.size() != na * nt ||
      corrections.antenna_scale.size() != na || predicted.sample_method.size() != na * nt)
    throw InvalidInput("phase corrections of " + std::to_string(corrections.antenna_scale.size()) +
                       " antennas x " + std::to_string(corrections.time_s.size()) +
                       " times do not match the predicted paths' " + std::to_string(na) + " x " +
                       std::to_string(nt));
  corrections.path_predicted.assign(na * nt, kPathMeasured);
  corrections.predicted_expected_residual_mm = predicted.expected_residual_mm;
  const double rad_per_mm =
      detail::corrector_phase_rad_per_mm(corrections.obs_freq_ghz, corrections.phase_per_path);
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t k = 0; k < nt; ++k) {
      const std::size_t at = a * nt + k;
      if (predicted.sample_method[at] == kPathMeasured) continue;
      const double path_mm = predicted.paths.path_mm[at];
      corrections.path_mm[at] = path_mm;
      // The same arithmetic as the corrector's (streaming_corrector_kernel.hpp).
      corrections.phase_correction_rad[at] = (rad_per_mm * corrections.antenna_scale[a]) * path_mm;
      corrections.flags[at] = 0;
      corrections.path_predicted[at] = predicted.sample_method[at];
    }
  }
}

}  // namespace wvr
