// skyphase diagnose: structure functions, wind and fast-switching advice for the JSON summary.
#include <algorithm>
#include <array>
#include <cmath>
#include <functional>
#include <limits>
#include <optional>
#include <span>
#include <tuple>

#include "diagnose_output.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_switching.hpp"
#include "wvr/structure_function.hpp"

namespace skyphase {

nlohmann::ordered_json json_number(double v) {
  return std::isfinite(v) ? nlohmann::ordered_json(v) : nlohmann::ordered_json(nullptr);
}

namespace {

nlohmann::ordered_json fit_json(const wvr::BrokenPowerLawFit& f,
                                const wvr::StructureFunctionEstimate& points,
                                const std::string& source,
                                const std::string& separation_key) {
  nlohmann::ordered_json j;
  j["source"] = source;
  j["status"] = f.ok() ? "ok" : f.message;
  if (f.ok() && !f.message.empty()) j["note"] = f.message;
  j["model"] = f.has_break ? "broken power law" : "single power law";
  j["slope_short"] = json_number(f.alpha_short);
  j["slope_short_sigma"] = json_number(f.alpha_short_sigma);
  j["slope_long"] = json_number(f.alpha_long);
  j["slope_long_sigma"] = json_number(f.alpha_long_sigma);
  j["break_m"] = json_number(f.break_m);
  j["break_m_sigma"] = json_number(f.break_sigma_m);
  j["amplitude_at_break_m2"] = json_number(f.amplitude_m2);
  j["saturation_m2"] = json_number(f.saturation_m2);
  j["transition_width"] = json_number(f.transition_width);
  nlohmann::ordered_json sep = nlohmann::ordered_json::array(),
                         val = nlohmann::ordered_json::array(),
                         fitted = nlohmann::ordered_json::array();
  for (std::size_t i = 0; i < points.separation.size(); ++i) {
    sep.push_back(json_number(points.separation[i]));
    val.push_back(json_number(points.value_m2[i]));
    fitted.push_back(f.ok() ? json_number(f.evaluate_m2(points.separation[i])) : nullptr);
  }
  j[separation_key] = sep;
  j["path_structure_m2"] = val;
  j["fitted_m2"] = fitted;
  return j;
}

// Structure function of one source: per-baseline values, binned, fitted.
struct FittedStructure {
  bool ok = false;
  wvr::BrokenPowerLawFit fit;
  nlohmann::ordered_json json;
};

nlohmann::ordered_json regime_json(const wvr::RegimeSlope& r) {
  if (!r.measured) return {{"status", "not measured: " + r.message}};
  return {{"slope", json_number(r.slope)},
          {"slope_sigma", json_number(r.slope_sigma)},
          {"points", r.points}};
}

// The equivalent slab thickness: the physical break length of the structure function.
nlohmann::ordered_json slab_json(const wvr::NightSlabThickness& night_fit) {
  const wvr::SlabThicknessFit& f = night_fit.fit;
  nlohmann::ordered_json j;
  j["status"] = f.ok() ? "ok" : f.message;
  if (!f.ok()) return j;
  j["constraint"] = wvr::to_string(f.constraint);
  j["thickness_m"] = json_number(f.thickness_m);
  j["thickness_low_m"] = json_number(f.thickness_low_m);
  j["thickness_high_m"] = json_number(f.thickness_high_m);
  // The interval above only reflects the points' scatter; this one the night's own sample
  // variance (jackknife over time segments), still a lower bound on the real error.
  j["thickness_jackknife_low_m"] = json_number(night_fit.jackknife_low_m);
  j["thickness_jackknife_high_m"] = json_number(night_fit.jackknife_high_m);
  j["path_m2_at_thickness"] = json_number(f.path_m2_at_thickness);
  // null: no saturation among the points (the fit kept no outer scale).
  j["outer_scale_m"] = json_number(f.outer_scale_m);
  j["thick_regime"] = regime_json(f.thick);
  j["thin_regime"] = regime_json(f.thin);
  if (f.ok() && !f.message.empty()) j["note"] = f.message;
  return j;
}

FittedStructure fitted_structure(const wvr::SpatialStructureResult& r, const std::string& source) {
  FittedStructure out;
  if (!r.ok()) {
    out.json = {{"source", source}, {"status", r.message}};
    return out;
  }
  const wvr::StructureFunctionEstimate binned = wvr::bin_structure_function(r);
  out.fit = wvr::fit_broken_power_law(binned.separation, binned.value_m2);
  out.ok = out.fit.ok();
  out.json = fit_json(out.fit, binned, source, "baseline_m");
  return out;
}

// Temporal structure function of the radiometer path difference of three baselines (the
// shortest, the median and the longest) at lags from 1 s to 1000 s.
nlohmann::ordered_json temporal_json(const wvr::Night& night,
                                     const wvr::AntennaPaths& paths,
                                     const wvr::SpatialStructureResult& spatial) {
  const std::string source = "radiometer path difference L_b - L_a against time lag";
  if (!spatial.ok() || paths.time_s.size() < 4) {
    return {{"source", source}, {"status", "not available: no usable baselines"}};
  }
  const std::vector<wvr::BaselineStructure>& b = spatial.baselines;  // sorted by length
  std::vector<std::array<int, 2>> pairs;
  for (std::size_t k : {std::size_t{0}, b.size() / 2, b.size() - 1}) {
    const std::array<int, 2> pair = {b[k].antenna_a, b[k].antenna_b};
    if (pairs.empty() || pairs.back() != pair) pairs.push_back(pair);
  }
  const double span_s = paths.time_s.back() - paths.time_s.front();
  std::vector<double> lags;
  for (double lag : {1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0})
    if (lag < 0.5 * span_s) lags.push_back(lag);
  wvr::TemporalStructureResult r;
  try {
    r = wvr::temporal_path_structure(paths, lags, pairs);
  } catch (const wvr::InvalidInput& e) {  // a cadence coarser than the shortest lags
    return {{"source", source}, {"status", std::string("not available: ") + e.what()}};
  }
  if (!r.ok()) return {{"source", source}, {"status", r.message}};
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (std::size_t i = 0; i < r.series.size(); ++i) {
    const auto [a, c] = r.series[i];
    const auto& pa = night.array.position_enu_m[static_cast<std::size_t>(a)];
    const auto& pc = night.array.position_enu_m[static_cast<std::size_t>(c)];
    nlohmann::ordered_json values = nlohmann::ordered_json::array();
    for (double v : r.estimates[i].value_m2) values.push_back(json_number(v));
    list.push_back({{"antenna_a", night.array.antenna_names[static_cast<std::size_t>(a)]},
                    {"antenna_b", night.array.antenna_names[static_cast<std::size_t>(c)]},
                    {"length_m", std::hypot(pc[0] - pa[0], pc[1] - pa[1])},
                    {"path_structure_m2", values}});
  }
  nlohmann::ordered_json lag_list = nlohmann::ordered_json::array();
  for (double v : r.estimates.front().separation) lag_list.push_back(v);
  return {{"source", source}, {"status", "ok"}, {"lag_s", lag_list}, {"baselines", list}};
}

// Holdaway advice. Uncorrected: the radiometer's (wet) structure function plus the corrected
// residual's (what the radiometers cannot see, mostly dry air): independent layers add in D.
// Corrected: the residual alone, from the corrected calibrator phases by lag.
nlohmann::ordered_json fast_switching_json(const FittedStructure& radiometer,
                                           const std::optional<wvr::SlabThicknessFit>& slab,
                                           const FittedStructure& residual,
                                           const wvr::WindEstimate& wind,
                                           const wvr::Night& night,
                                           const CommonOptions& o) {
  // The wet structure function: the slab model (its outer scale describes saturation), else
  // the broken power law unless a slope of it stopped at a bound.
  std::function<double(double)> wet;
  std::string wet_source;
  if (slab && slab->ok()) {
    const wvr::SlabThicknessFit s = *slab;
    wet = [s](double d) { return d > 0.0 ? s.evaluate_m2(d) : 0.0; };
    wet_source = "radiometer slab fit (wet only)";
  } else if (radiometer.ok && radiometer.fit.message.find("bound") == std::string::npos) {
    const wvr::BrokenPowerLawFit f = radiometer.fit;
    wet = [f](double d) { return d > 0.0 ? f.evaluate_m2(d) : 0.0; };
    wet_source = "radiometer broken power-law fit (wet only)";
  }
  if (!wet || !wind.ok()) {
    return {{"status",
             "not available: needs a usable radiometer structure function fit and a wind "
             "estimate"}};
  }
  const auto model_of = [](const wvr::BrokenPowerLawFit& f) {
    return [f](double d) { return d > 0.0 ? f.evaluate_m2(d) : 0.0; };
  };
  wvr::FastSwitchingInput input;
  std::string uncorrected_source = wet_source;
  if (residual.ok) {
    const auto rest = model_of(residual.fit);
    input.uncorrected = wvr::PathStructureFunction::from_function(
        [wet, rest](double d) { return wet(d) + rest(d); }, std::numeric_limits<double>::infinity(),
        "radiometer + corrected residual");
    input.corrected = wvr::PathStructureFunction::from_function(
        rest, std::numeric_limits<double>::infinity(), "corrected residual by lag");
    uncorrected_source = wet_source + " + corrected residual fit";
  } else {
    input.uncorrected = wvr::PathStructureFunction::from_function(
        wet, std::numeric_limits<double>::infinity(), "radiometer fit");
  }
  input.wind_speed_m_s = wind.speed_m_s;
  input.layer_height_m = o.advice_layer_height_m;
  input.calibrator_separation_deg = o.advice_separation_deg;
  input.freq_ghz = night_obs_freq_ghz(night);
  input.target_rms_deg = o.advice_target_rms_deg;
  try {
    const wvr::FastSwitchingAdvice advice = wvr::advise_fast_switching(input);
    // The fits hold where they were measured; say when the answer leans on extrapolation.
    const auto measured_to_m = [](const FittedStructure& f, const char* key) {
      const auto it = f.json.find(key);
      double longest = 0.0;
      if (it != f.json.end() && it->is_array())
        for (const auto& v : *it)
          if (v.is_number()) longest = std::max(longest, v.get<double>());
      return longest;
    };
    nlohmann::ordered_json notes = nlohmann::ordered_json::array();
    for (const auto& [name, solution, to_m] :
         {std::tuple{"uncorrected", &advice.uncorrected, measured_to_m(radiometer, "baseline_m")},
          std::tuple{"corrected", advice.corrected ? &*advice.corrected : nullptr,
                     measured_to_m(residual, "flow_separation_m")}}) {
      if (solution == nullptr || !std::isfinite(solution->effective_separation_m)) continue;
      if (solution->effective_separation_m > to_m) {
        notes.push_back(std::string(name) + ": effective separation " +
                        std::to_string(std::lround(solution->effective_separation_m)) +
                        " m lies beyond the measured " + std::to_string(std::lround(to_m)) +
                        " m; the structure function fit is extrapolated there");
      }
    }
    return {{"method",
             "Holdaway fast-switching rule: sigma = (2 pi nu / c) sqrt(D(v t_cyc / 2 + h theta))"},
            {"uncorrected_structure", uncorrected_source},
            {"corrected_structure",
             residual.ok ? "corrected calibrator phases by lag (fit)"
                         : "not available: " + residual.json.value("status", std::string())},
            {"freq_ghz", input.freq_ghz},
            {"target_rms_deg", input.target_rms_deg},
            {"layer_height_m", input.layer_height_m},
            {"calibrator_separation_deg", input.calibrator_separation_deg},
            {"cycle_time_s_uncorrected", json_number(advice.uncorrected.cycle_time_s)},
            {"cycle_time_s_corrected",
             advice.corrected ? json_number(advice.corrected->cycle_time_s) : nullptr},
            {"cycle_time_gain", json_number(advice.cycle_time_gain)},
            {"report", advice.brief_report()},
            {"notes", notes}};
  } catch (const wvr::InvalidInput& e) {
    return {{"status", e.what()}};
  }
}

}  // namespace

nlohmann::ordered_json structure_wind_and_advice(const Prepared& p,
                                                 const wvr::NightDiagnosis& diagnosis,
                                                 const wvr::CorrectionMetrics& metrics,
                                                 const CommonOptions& o) {
  nlohmann::ordered_json j;
  // Radiometer paths for the structure function and the wind, leaving out cloudy scans (liquid
  // read as vapour moves every antenna at once) and antennas flagged as faulty.
  wvr::AntennaPaths clean = p.paths;
  const std::size_t nt = clean.time_s.size();
  for (const wvr::WindowDiagnosis& w : diagnosis.windows) {
    for (std::size_t a = 0; a < p.night.antenna_count(); ++a) {
      if (w.verdict != wvr::Verdict::kCloud && w.antenna_faults[a] == 0) continue;
      for (std::size_t k = 0; k < nt; ++k) {
        if (clean.time_s[k] >= w.start_s && clean.time_s[k] < w.stop_s)
          clean.path_mm[a * nt + k] = std::nan("");
      }
    }
  }
  // Structure functions: the radiometer's wet-path one over the whole night (full spatial
  // structure), and the calibrator phases' before and after correction (within-scan scatter).
  // The radiometer one has the retrieval's white path noise taken out and carries the slab fit
  // (the calibrator ones are capped by the scan length, so a thickness would mean nothing).
  wvr::SpatialStructureOptions radiometer_options;
  if (p.retrieval.antennas == p.night.antenna_count())
    radiometer_options.antenna_path_noise_mm = wvr::antenna_path_noise_mm(p.retrieval);
  const wvr::SpatialStructureResult radiometer_sf =
      wvr::radiometer_structure_function(p.night, clean, radiometer_options);
  FittedStructure radiometer = fitted_structure(
      radiometer_sf,
      "radiometer wet path, whole night, radiometer noise subtracted, cloud and faults left out");
  std::optional<wvr::SlabThicknessFit> slab;
  if (radiometer_sf.ok()) {
    double noise_m2 = 0.0;
    for (const wvr::BaselineStructure& b : radiometer_sf.baselines) noise_m2 += b.noise_m2;
    radiometer.json["noise_subtracted_m2_mean"] =
        json_number(noise_m2 / static_cast<double>(radiometer_sf.baselines.size()));
    const wvr::NightSlabThickness night_slab =
        wvr::night_slab_thickness(p.night, clean, radiometer_options);
    radiometer.json["slab"] = slab_json(night_slab);
    slab = night_slab.fit;
  }
  const FittedStructure before = fitted_structure(
      wvr::calibrator_structure_function(p.night, p.night.calibrator_phases.phase_rad),
      "calibrator phases before correction");
  const FittedStructure after =
      fitted_structure(wvr::calibrator_structure_function(p.night, metrics.corrected_phase_rad),
                       "calibrator phases after correction");
  const wvr::WindEstimate wind = wvr::estimate_wind(p.night, clean);
  j["wind_speed_m_s"] = wind.ok() ? json_number(wind.speed_m_s) : nullptr;
  j["wind_direction_deg"] = wind.ok() ? json_number(wind.direction_to_deg) : nullptr;
  j["wind"] = {
      {"status", wind.ok() ? "ok" : wind.message},
      {"speed_sigma_m_s", json_number(wind.speed_sigma_m_s)},
      {"direction_sigma_deg", json_number(wind.direction_sigma_deg)},
      {"direction_convention", "direction the turbulence moves towards, from north through east"},
      {"pairs_used", wind.pairs_used}};
  // Calibrator phases in time, mapped onto the flow with the wind speed: before correction
  // (lags whose phase differences wrap are left out) and after; the corrected one is the
  // residual the fast-switching advice needs.
  FittedStructure before_by_lag, after_by_lag;
  for (const auto& [fitted, phases, source] :
       {std::tuple{&before_by_lag, std::span<const double>(p.night.calibrator_phases.phase_rad),
                   "calibrator phases before correction, by lag (flow separation = wind x lag)"},
        std::tuple{&after_by_lag, std::span<const double>(metrics.corrected_phase_rad),
                   "calibrator phases after correction, by lag (flow separation = wind x lag)"}}) {
    if (!wind.ok()) {
      fitted->json = {{"source", source}, {"status", "not available: no wind estimate"}};
      continue;
    }
    const wvr::CalibratorTemporalResult r =
        wvr::calibrator_temporal_structure(p.night, phases, wind.speed_m_s);
    if (!r.ok()) {
      fitted->json = {{"source", source}, {"status", r.message}};
      continue;
    }
    fitted->fit = wvr::fit_broken_power_law(r.estimate.separation, r.estimate.value_m2);
    fitted->ok = fitted->fit.ok();
    fitted->json = fit_json(fitted->fit, r.estimate, source, "flow_separation_m");
    fitted->json["lag_s"] = r.lag_s;
    if (!r.message.empty()) fitted->json["lags_note"] = r.message;
  }
  j["structure_function"] = {{"radiometer", radiometer.json},
                             {"radiometer_by_time", temporal_json(p.night, clean, radiometer_sf)},
                             {"before", before.json},
                             {"after", after.json},
                             {"before_by_lag", before_by_lag.json},
                             {"after_by_lag", after_by_lag.json}};
  j["fast_switching"] = fast_switching_json(radiometer, slab, after_by_lag, wind, p.night, o);
  return j;
}

}  // namespace skyphase
