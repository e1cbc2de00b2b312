#include "wvr/night_turbulence.hpp"

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <span>

#include "turbulence/calibrator_groups.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

FittedStructureFunction fitted_spatial(const SpatialStructureResult& r, std::string source) {
  FittedStructureFunction out;
  out.source = std::move(source);
  out.status = r.status;
  out.message = r.message;
  if (!r.ok()) return out;
  out.points = bin_structure_function(r);
  out.fit = fit_broken_power_law(out.points.separation, out.points.value_m2);
  return out;
}

RadiometerTemporalStructure temporal_structure(const Night& night,
                                               const AntennaPaths& paths,
                                               const SpatialStructureResult& spatial) {
  RadiometerTemporalStructure out;
  out.source = "radiometer path difference L_b - L_a against time lag";
  if (!spatial.ok() || paths.time_s.size() < 4) {
    out.message = "not available: no usable baselines";
    return out;
  }
  const std::vector<BaselineStructure>& b = spatial.baselines;  // sorted by length
  std::vector<std::array<int, 2>> pairs;
  for (std::size_t k : {std::size_t{0}, b.size() / 2, b.size() - 1}) {
    const std::array<int, 2> pair = {b[k].antenna_a, b[k].antenna_b};
    if (pairs.empty() || pairs.back() != pair) pairs.push_back(pair);
  }
  const double span_s = paths.time_s.back() - paths.time_s.front();
  std::vector<double> lags;
  for (double lag : {1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0})
    if (lag < 0.5 * span_s) lags.push_back(lag);
  TemporalStructureResult r;
  try {
    r = temporal_path_structure(paths, lags, pairs);
  } catch (const InvalidInput& e) {  // a cadence coarser than the shortest lags
    out.message = std::string("not available: ") + e.what();
    return out;
  }
  out.status = r.status;
  out.message = r.message;
  if (!r.ok()) return out;
  out.lag_s = r.estimates.front().separation;
  for (std::size_t i = 0; i < r.series.size(); ++i) {
    const auto [a, c] = r.series[i];
    const auto& pa = night.array.position_enu_m[static_cast<std::size_t>(a)];
    const auto& pc = night.array.position_enu_m[static_cast<std::size_t>(c)];
    out.baselines.push_back({a, c});
    out.baseline_length_m.push_back(std::hypot(pc[0] - pa[0], pc[1] - pa[1]));
    out.structure_m2.push_back(r.estimates[i].value_m2);
  }
  return out;
}

FittedStructureFunction by_lag(const Night& night,
                               const detail::CalibratorGroups& grouped,
                               const WindEstimate& wind,
                               std::string source,
                               std::vector<double>& lag_s,
                               std::string& note) {
  FittedStructureFunction out;
  out.source = std::move(source);
  if (!wind.ok()) {
    out.message = "not available: no wind estimate";
    return out;
  }
  const CalibratorTemporalResult r =
      detail::calibrator_temporal_from_groups(night, grouped, wind.speed_m_s, {});
  out.status = r.status;
  out.message = r.message;
  if (!r.ok()) return out;
  out.points = r.estimate;
  out.fit = fit_broken_power_law(r.estimate.separation, r.estimate.value_m2);
  lag_s = r.lag_s;
  note = r.message;
  return out;
}

// A structure-function model of path (m^2) against separation (m); 0 at d <= 0.
std::function<double(double)> model_of(const BrokenPowerLawFit& f) {
  return [f](double d) { return d > 0.0 ? f.evaluate_m2(d) : 0.0; };
}

SwitchingAdvice switching_advice(const NightTurbulence& t,
                                 double obs_freq_ghz,
                                 const TurbulenceOptions& o) {
  SwitchingAdvice out;
  // The wet structure function: the slab model (its outer scale describes saturation), else
  // the broken power law unless a slope of it stopped at a bound.
  std::function<double(double)> wet;
  if (t.slab && t.slab->fit.ok()) {
    const SlabThicknessFit s = t.slab->fit;
    wet = [s](double d) { return d > 0.0 ? s.evaluate_m2(d) : 0.0; };
    out.wet_model = AdviceWetModel::kSlabFit;
  } else if (t.radiometer.fitted() && !t.radiometer.fit.slope_at_bound) {
    wet = model_of(t.radiometer.fit);
    out.wet_model = AdviceWetModel::kBrokenPowerLaw;
  }
  if (!wet || !t.wind.ok()) {
    out.message =
        "not available: needs a usable radiometer structure function fit and a wind estimate";
    return out;
  }
  const double unbounded = std::numeric_limits<double>::infinity();
  FastSwitchingInput& input = out.input;
  out.residual_used = t.after_by_lag.fitted();
  if (out.residual_used) {
    const auto rest = model_of(t.after_by_lag.fit);
    input.uncorrected =
        PathStructureFunction::from_function([wet, rest](double d) { return wet(d) + rest(d); },
                                             unbounded, "radiometer + corrected residual");
    input.corrected =
        PathStructureFunction::from_function(rest, unbounded, "corrected residual by lag");
  } else {
    input.uncorrected = PathStructureFunction::from_function(wet, unbounded, "radiometer fit");
  }
  input.wind_speed_m_s = t.wind.speed_m_s;
  input.layer_height_m = o.advice_layer_height_m;
  input.calibrator_separation_deg = o.advice_separation_deg;
  input.freq_ghz = obs_freq_ghz;
  input.target_rms_deg = o.advice_target_rms_deg;
  try {
    out.advice = advise_fast_switching(input);
  } catch (const InvalidInput& e) {
    out.status = DiagnosticStatus::kSolverFailure;
    out.message = e.what();
    return out;
  }
  out.status = DiagnosticStatus::kOk;
  // The fits hold where they were measured; say when the answer leans on extrapolation.
  const FastSwitchingAdvice& advice = *out.advice;
  struct Side {
    const char* name;
    const CycleTimeSolution* solution;
    double measured_to_m;
  };
  for (const Side& side :
       {Side{"uncorrected", &advice.uncorrected, t.radiometer.longest_separation_m()},
        Side{"corrected", advice.corrected ? &*advice.corrected : nullptr,
             t.after_by_lag.longest_separation_m()}}) {
    if (side.solution == nullptr || !std::isfinite(side.solution->effective_separation_m)) continue;
    if (side.solution->effective_separation_m > side.measured_to_m) {
      out.notes.push_back(std::string(side.name) + ": effective separation " +
                          std::to_string(std::lround(side.solution->effective_separation_m)) +
                          " m lies beyond the measured " +
                          std::to_string(std::lround(side.measured_to_m)) +
                          " m; the structure function fit is extrapolated there");
    }
  }
  return out;
}

}  // namespace

void TurbulenceOptions::validate() const {
  require_in_range("advice_layer_height_m", advice_layer_height_m, 0.0, 1e5, "m");
  require_in_range("advice_separation_deg", advice_separation_deg, 0.0, 180.0, "deg");
  require_finite("advice_target_rms_deg", advice_target_rms_deg);
  if (advice_target_rms_deg <= 0.0)
    throw InvalidInput(describe_value("advice_target_rms_deg", advice_target_rms_deg) +
                       " is not positive");
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " is negative");
}

const char* to_string(AdviceWetModel model) {
  switch (model) {
    case AdviceWetModel::kNone:
      return "none";
    case AdviceWetModel::kSlabFit:
      return "radiometer slab fit (wet only)";
    case AdviceWetModel::kBrokenPowerLaw:
      return "radiometer broken power-law fit (wet only)";
  }
  return "unknown";
}

double FittedStructureFunction::longest_separation_m() const {
  double longest = 0.0;
  for (double d : points.separation)
    if (std::isfinite(d)) longest = std::max(longest, d);
  return longest;
}

AntennaPaths paths_for_turbulence(const Night& night,
                                  const AntennaPaths& paths,
                                  const NightDiagnosis& diagnosis) {
  AntennaPaths clean = paths;
  const std::size_t nt = clean.time_s.size();
  for (const WindowDiagnosis& w : diagnosis.windows) {
    if (w.antenna_faults.size() != night.antenna_count())
      throw InvalidInput("diagnosis antenna_faults has " + std::to_string(w.antenna_faults.size()) +
                         " entries for a night of " + std::to_string(night.antenna_count()) +
                         " antennas");
    for (std::size_t a = 0; a < night.antenna_count(); ++a) {
      if (w.verdict != Verdict::kCloud && w.verdict != Verdict::kOutsideDomain &&
          w.antenna_faults[a] == 0)
        continue;
      for (std::size_t k = 0; k < nt; ++k) {
        if (clean.time_s[k] >= w.start_s && clean.time_s[k] < w.stop_s)
          clean.path_mm[a * nt + k] = std::nan("");
      }
    }
  }
  return clean;
}

NightTurbulence analyse_night_turbulence(const Night& night,
                                         const NightRetrieval& retrieval,
                                         const AntennaPaths& paths,
                                         const NightDiagnosis& diagnosis,
                                         const CorrectionMetrics& metrics,
                                         double obs_freq_ghz,
                                         const TurbulenceOptions& options) {
  options.validate();
  NightTurbulence t;
  const AntennaPaths clean = paths_for_turbulence(night, paths, diagnosis);
  SpatialStructureOptions radiometer_options;
  radiometer_options.threads = options.threads;
  if (retrieval.antennas == night.antenna_count())
    radiometer_options.antenna_path_noise_mm = antenna_path_noise_mm(retrieval);
  const SpatialStructureResult radiometer_sf =
      radiometer_structure_function(night, clean, radiometer_options);
  t.radiometer = fitted_spatial(
      radiometer_sf,
      "radiometer wet path, whole night, radiometer noise subtracted, cloud, faults and scans "
      "outside the retrieval's domain left out");
  if (radiometer_sf.ok()) {
    double noise_m2 = 0.0;
    for (const BaselineStructure& b : radiometer_sf.baselines) noise_m2 += b.noise_m2;
    t.radiometer_noise_subtracted_m2_mean =
        noise_m2 / static_cast<double>(radiometer_sf.baselines.size());
    t.slab = night_slab_thickness(night, clean, radiometer_options);
  }
  t.radiometer_by_time = temporal_structure(night, clean, radiometer_sf);
  WindOptions wind_options;
  wind_options.threads = options.threads;
  t.wind = estimate_wind(night, clean, wind_options);
  // Each phase set grouped once for its spatial and its by-lag structure function.
  const auto calibrator = [&](std::span<const double> phase_rad, const std::string& when,
                              FittedStructureFunction& spatial, FittedStructureFunction& lagged,
                              std::vector<double>& lag_s, std::string& note) {
    detail::require_row_phases(night, phase_rad);
    const detail::CalibratorGroups grouped =
        detail::group_calibrator_rows(night, phase_rad, detail::calibrator_scans(night));
    spatial = fitted_spatial(detail::calibrator_structure_from_groups(night, grouped, {}),
                             "calibrator phases " + when);
    lagged = by_lag(night, grouped, t.wind,
                    "calibrator phases " + when + ", by lag (flow separation = wind x lag)", lag_s,
                    note);
  };
  // One phase set after the other: side by side, their groupings of every calibrator row at once
  // raised the peak memory of a 64-antenna, 8-hour night with every baseline from 1.26 to
  // 1.50 GB for 0.5 s of its 12 s.
  calibrator(night.calibrator_phases.phase_rad, "before correction", t.before, t.before_by_lag,
             t.before_by_lag_lag_s, t.before_by_lag_note);
  calibrator(metrics.corrected_phase_rad, "after correction", t.after, t.after_by_lag,
             t.after_by_lag_lag_s, t.after_by_lag_note);
  t.switching = switching_advice(t, obs_freq_ghz, options);
  return t;
}

}  // namespace wvr
