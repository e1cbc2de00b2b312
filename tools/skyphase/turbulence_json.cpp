// JSON rendering of a night's turbulence (wvr/night_turbulence.hpp) for skyphase diagnose,
// process and report.
#include <cmath>

#include "diagnose_output.hpp"

namespace skyphase {

nlohmann::ordered_json json_number(double v) {
  return std::isfinite(v) ? nlohmann::ordered_json(v) : nlohmann::ordered_json(nullptr);
}

namespace {

nlohmann::ordered_json fit_json(const wvr::FittedStructureFunction& s,
                                const std::string& separation_key) {
  nlohmann::ordered_json j;
  j["source"] = s.source;
  if (!s.measured()) {
    j["status"] = s.message;
    return j;
  }
  const wvr::BrokenPowerLawFit& f = s.fit;
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
  for (std::size_t i = 0; i < s.points.separation.size(); ++i) {
    sep.push_back(json_number(s.points.separation[i]));
    val.push_back(json_number(s.points.value_m2[i]));
    fitted.push_back(f.ok() ? json_number(f.evaluate_m2(s.points.separation[i])) : nullptr);
  }
  j[separation_key] = sep;
  j["path_structure_m2"] = val;
  j["fitted_m2"] = fitted;
  return j;
}

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
  // The stated 1-sigma interval: the wider, on each side, of the night's own sample variance
  // (jackknife over time segments) and the points' scatter about the model (profile), both
  // also given alone.
  j["thickness_low_m"] = json_number(f.thickness_low_m);
  j["thickness_high_m"] = json_number(f.thickness_high_m);
  j["thickness_jackknife_low_m"] = json_number(night_fit.jackknife_low_m);
  j["thickness_jackknife_high_m"] = json_number(night_fit.jackknife_high_m);
  j["thickness_profile_low_m"] = json_number(night_fit.profile_low_m);
  j["thickness_profile_high_m"] = json_number(night_fit.profile_high_m);
  j["path_m2_at_thickness"] = json_number(f.path_m2_at_thickness);
  // null: no saturation among the points (the fit kept no outer scale).
  j["outer_scale_m"] = json_number(f.outer_scale_m);
  j["thick_regime"] = regime_json(f.thick);
  j["thin_regime"] = regime_json(f.thin);
  if (f.ok() && !f.message.empty()) j["note"] = f.message;
  return j;
}

nlohmann::ordered_json temporal_json(const wvr::Night& night,
                                     const wvr::RadiometerTemporalStructure& r) {
  if (r.status != wvr::DiagnosticStatus::kOk) return {{"source", r.source}, {"status", r.message}};
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (std::size_t i = 0; i < r.baselines.size(); ++i) {
    nlohmann::ordered_json values = nlohmann::ordered_json::array();
    for (double v : r.structure_m2[i]) values.push_back(json_number(v));
    list.push_back(
        {{"antenna_a", night.array.antenna_names[static_cast<std::size_t>(r.baselines[i][0])]},
         {"antenna_b", night.array.antenna_names[static_cast<std::size_t>(r.baselines[i][1])]},
         {"length_m", r.baseline_length_m[i]},
         {"path_structure_m2", values}});
  }
  return {{"source", r.source}, {"status", "ok"}, {"lag_s", r.lag_s}, {"baselines", list}};
}

nlohmann::ordered_json by_lag_json(const wvr::FittedStructureFunction& s,
                                   const std::vector<double>& lag_s,
                                   const std::string& note) {
  nlohmann::ordered_json j = fit_json(s, "flow_separation_m");
  if (!s.measured()) return j;
  j["lag_s"] = lag_s;
  if (!note.empty()) j["lags_note"] = note;
  return j;
}

nlohmann::ordered_json advice_json(const wvr::NightTurbulence& t) {
  const wvr::SwitchingAdvice& s = t.switching;
  if (!s.advice) return {{"status", s.message}};
  const wvr::FastSwitchingAdvice& advice = *s.advice;
  const std::string wet = wvr::to_string(s.wet_model);
  return {
      {"method",
       "Holdaway fast-switching rule: sigma = (2 pi nu / c) sqrt(D(v t_cyc / 2 + h theta))"},
      {"uncorrected_structure", s.residual_used ? wet + " + corrected residual fit" : wet},
      {"corrected_structure",
       s.residual_used ? "corrected calibrator phases by lag (fit)"
                       : "not available: " + (t.after_by_lag.measured() ? t.after_by_lag.fit.message
                                                                        : t.after_by_lag.message)},
      {"freq_ghz", s.input.freq_ghz},
      {"target_rms_deg", s.input.target_rms_deg},
      {"layer_height_m", s.input.layer_height_m},
      {"calibrator_separation_deg", s.input.calibrator_separation_deg},
      {"cycle_time_s_uncorrected", json_number(advice.uncorrected.cycle_time_s)},
      {"cycle_time_s_corrected",
       advice.corrected ? json_number(advice.corrected->cycle_time_s) : nullptr},
      {"cycle_time_gain", json_number(advice.cycle_time_gain)},
      {"report", advice.brief_report()},
      {"notes", s.notes}};
}

}  // namespace

nlohmann::ordered_json turbulence_json(const wvr::Night& night, const wvr::NightTurbulence& t) {
  nlohmann::ordered_json j;
  nlohmann::ordered_json radiometer = fit_json(t.radiometer, "baseline_m");
  if (t.radiometer.measured()) {
    radiometer["noise_subtracted_m2_mean"] = json_number(t.radiometer_noise_subtracted_m2_mean);
    if (t.slab) radiometer["slab"] = slab_json(*t.slab);
  }
  const wvr::WindEstimate& wind = t.wind;
  j["wind_speed_m_s"] = wind.ok() ? json_number(wind.speed_m_s) : nullptr;
  j["wind_direction_deg"] = wind.ok() ? json_number(wind.direction_to_deg) : nullptr;
  j["wind"] = {
      {"status", wind.ok() ? "ok" : wind.message},
      {"speed_sigma_m_s", json_number(wind.speed_sigma_m_s)},
      {"direction_sigma_deg", json_number(wind.direction_sigma_deg)},
      {"direction_convention", "direction the turbulence moves towards, from north through east"},
      {"pairs_used", wind.pairs_used}};
  j["structure_function"] = {
      {"radiometer", radiometer},
      {"radiometer_by_time", temporal_json(night, t.radiometer_by_time)},
      {"before", fit_json(t.before, "baseline_m")},
      {"after", fit_json(t.after, "baseline_m")},
      {"before_by_lag", by_lag_json(t.before_by_lag, t.before_by_lag_lag_s, t.before_by_lag_note)},
      {"after_by_lag", by_lag_json(t.after_by_lag, t.after_by_lag_lag_s, t.after_by_lag_note)}};
  j["fast_switching"] = advice_json(t);
  return j;
}

}  // namespace skyphase
