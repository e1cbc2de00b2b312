// skyphase diagnose: verdicts per scan and antenna, with the numbers behind them.
#include <cmath>
#include <iostream>
#include <limits>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "diagnose_output.hpp"
#include "pipeline.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_switching.hpp"
#include "wvr/night_file.hpp"
#include "wvr/structure_function.hpp"

namespace skyphase {
namespace {

nlohmann::ordered_json number(double v) {
  return std::isfinite(v) ? nlohmann::ordered_json(v) : nlohmann::ordered_json(nullptr);
}

nlohmann::ordered_json fit_json(const wvr::BrokenPowerLawFit& f,
                                const wvr::StructureFunctionEstimate& points,
                                const std::string& source) {
  nlohmann::ordered_json j;
  j["source"] = source;
  j["status"] = f.ok() ? "ok" : f.message;
  j["model"] = f.has_break ? "broken power law" : "single power law";
  j["slope_short"] = number(f.alpha_short);
  j["slope_short_sigma"] = number(f.alpha_short_sigma);
  j["slope_long"] = number(f.alpha_long);
  j["slope_long_sigma"] = number(f.alpha_long_sigma);
  j["break_m"] = number(f.break_m);
  j["break_m_sigma"] = number(f.break_sigma_m);
  j["amplitude_at_break_m2"] = number(f.amplitude_m2);
  j["saturation_m2"] = number(f.saturation_m2);
  j["transition_width"] = number(f.transition_width);
  nlohmann::ordered_json sep = nlohmann::ordered_json::array(),
                         val = nlohmann::ordered_json::array(),
                         fitted = nlohmann::ordered_json::array();
  for (std::size_t i = 0; i < points.separation.size(); ++i) {
    sep.push_back(number(points.separation[i]));
    val.push_back(number(points.value_m2[i]));
    fitted.push_back(f.ok() ? number(f.evaluate_m2(points.separation[i])) : nullptr);
  }
  j["baseline_m"] = sep;
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
  return {{"slope", number(r.slope)}, {"slope_sigma", number(r.slope_sigma)}, {"points", r.points}};
}

// The equivalent slab thickness: the physical break length of the structure function.
nlohmann::ordered_json slab_json(const wvr::NightSlabThickness& night_fit) {
  const wvr::SlabThicknessFit& f = night_fit.fit;
  nlohmann::ordered_json j;
  j["status"] = f.ok() ? "ok" : f.message;
  if (f.status == wvr::DiagnosticStatus::kNoData) return j;
  j["constraint"] = wvr::to_string(f.constraint);
  j["thickness_m"] = number(f.thickness_m);
  j["thickness_low_m"] = number(f.thickness_low_m);
  j["thickness_high_m"] = number(f.thickness_high_m);
  // The interval above only reflects the points' scatter; this one the night's own sample
  // variance (jackknife over time segments), still a lower bound on the real error.
  j["thickness_jackknife_low_m"] = number(night_fit.jackknife_low_m);
  j["thickness_jackknife_high_m"] = number(night_fit.jackknife_high_m);
  j["path_m2_at_thickness"] = number(f.path_m2_at_thickness);
  // null: no saturation among the points (the fit kept no outer scale).
  j["outer_scale_m"] = number(f.outer_scale_m);
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
  out.json = fit_json(out.fit, binned, source);
  return out;
}

}  // namespace

DiagnosedNight diagnose_and_write(const CommonOptions& o) {
  Prepared p = prepare(o);
  DiagnosedNight out;
  const StoredCalibration stored = stored_calibration(p.night, o.night_file);
  wvr::CalibrationResult calibration;
  if (stored.present) {
    calibration.status = wvr::CalibrationStatus::kConverged;
    calibration.scale = stored.scale;
    calibration.scale_sigma = stored.scale_sigma;
    calibration.antenna_scale = stored.antenna_scale;
    calibration.antenna_scale_sigma = stored.antenna_scale_sigma;
  } else {
    calibration = wvr::solve_scaling(p.night, p.paths, p.phase_per_path);
    if (calibration.antenna_scale.empty())
      calibration.antenna_scale.assign(p.night.antenna_count(), 1.0);
    p.new_groups.push_back(wvr::calibration_result_group(calibration));
  }
  const wvr::CorrectionMetrics metrics =
      wvr::evaluate_correction(p.night, p.paths, calibration.antenna_scale, p.phase_per_path);
  if (p.night.find_result("correction") == nullptr) {
    const double freq = night_obs_freq_ghz(p.night);
    p.new_groups.push_back(wvr::correction_result_group(
        wvr::compute_phase_corrections(p.night, p.coefficients, calibration.antenna_scale, freq,
                                       p.phase_per_path(freq)),
        metrics));
  }
  const wvr::NightDiagnosis diagnosis =
      wvr::diagnose_night(p.night, p.retrieval, p.paths, metrics, p.phase_per_path);
  p.new_groups.push_back(wvr::diagnosis_result_group(diagnosis));
  wvr::NightWriteOptions write;
  write.overwrite_output = o.overwrite;
  write.replace_existing_results = true;
  wvr::add_result_groups(o.night_file, o.output_file, p.new_groups, write);

  nlohmann::ordered_json j;
  j["night"] = o.night_file;
  j["output"] = o.output_file;
  j["antennas"] = diagnosis.antenna_names;
  std::map<std::string, int> counts;
  nlohmann::ordered_json windows = nlohmann::ordered_json::array();
  for (const wvr::WindowDiagnosis& w : diagnosis.windows) {
    ++counts[wvr::to_string(w.verdict)];
    nlohmann::ordered_json flagged = nlohmann::ordered_json::array();
    for (std::size_t a = 0; a < w.antenna_faults.size(); ++a) {
      if (w.antenna_faults[a] == 0) continue;
      flagged.push_back({{"antenna", diagnosis.antenna_names[a]},
                         {"faults", wvr::describe_antenna_faults(w.antenna_faults[a])}});
    }
    windows.push_back({{"start_s", w.start_s},
                       {"stop_s", w.stop_s},
                       {"kind", w.calibrator ? "calibrator" : "target"},
                       {"verdict", wvr::to_string(w.verdict)},
                       {"inherited", w.inherited},
                       {"reason", w.reason},
                       {"antennas", flagged},
                       {"numbers",
                        {{"phase_rms_before_deg", number(w.rms_before_deg)},
                         {"phase_rms_after_deg", number(w.rms_after_deg)},
                         {"floor_deg", number(w.floor_deg)},
                         {"improvement_factor", number(w.improvement_factor)},
                         {"correlation", number(w.correlation)},
                         {"slope", number(w.slope)},
                         {"radiometer_path_rms_um", number(w.radiometer_path_rms_um)},
                         {"chi2_per_dof", number(w.chi2_per_dof)}}}});
  }
  j["summary"] = {{"windows", diagnosis.windows.size()},
                  {"verdict_counts", counts},
                  {"scale", number(calibration.scale)},
                  {"scale_sigma", number(calibration.scale_sigma)},
                  {"phase_rms_before_deg", number(metrics.phase_rms_before_deg)},
                  {"phase_rms_after_deg", number(metrics.phase_rms_after_deg)},
                  {"improvement_factor", number(metrics.improvement_factor)},
                  {"coherence_before", number(metrics.coherence_before)},
                  {"coherence_after", number(metrics.coherence_after)}};
  j["windows"] = windows;
  const wvr::DiagnosisThresholds& t = diagnosis.thresholds;
  j["thresholds"] = {{"cloud_chi2_per_dof", t.cloud_chi2_per_dof},
                     {"cloud_antenna_fraction", t.cloud_antenna_fraction},
                     {"quiet_floor_ratio", t.quiet_floor_ratio},
                     {"dry_floor_ratio", t.dry_floor_ratio},
                     {"scale_min_correlation", t.scale_min_correlation},
                     {"scale_tolerance", t.scale_tolerance},
                     {"fault_unusable_fraction", t.fault_unusable_fraction},
                     {"stuck_noise_fraction", t.stuck_noise_fraction},
                     {"spike_chi2_per_dof", t.spike_chi2_per_dof},
                     {"spike_fraction", t.spike_fraction},
                     {"fault_chi2_ratio", t.fault_chi2_ratio},
                     {"fault_residual_ratio", t.fault_residual_ratio}};
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
  if (radiometer_sf.ok()) {
    double noise_m2 = 0.0;
    for (const wvr::BaselineStructure& b : radiometer_sf.baselines) noise_m2 += b.noise_m2;
    radiometer.json["noise_subtracted_m2_mean"] =
        number(noise_m2 / static_cast<double>(radiometer_sf.baselines.size()));
    radiometer.json["slab"] =
        slab_json(wvr::night_slab_thickness(p.night, clean, radiometer_options));
  }
  const FittedStructure before = fitted_structure(
      wvr::calibrator_structure_function(p.night, p.night.calibrator_phases.phase_rad),
      "calibrator phases before correction");
  const FittedStructure after =
      fitted_structure(wvr::calibrator_structure_function(p.night, metrics.corrected_phase_rad),
                       "calibrator phases after correction");
  j["structure_function"] = {
      {"radiometer", radiometer.json}, {"before", before.json}, {"after", after.json}};
  const wvr::WindEstimate wind = wvr::estimate_wind(p.night, clean);
  j["wind_speed_m_s"] = wind.ok() ? number(wind.speed_m_s) : nullptr;
  j["wind_direction_deg"] = wind.ok() ? number(wind.direction_to_deg) : nullptr;
  j["wind"] = {
      {"status", wind.ok() ? "ok" : wind.message},
      {"speed_sigma_m_s", number(wind.speed_sigma_m_s)},
      {"direction_sigma_deg", number(wind.direction_sigma_deg)},
      {"direction_convention", "direction the turbulence moves towards, from north through east"},
      {"pairs_used", wind.pairs_used}};
  // Fast-switching advice from the radiometer's structure function (and the corrected one).
  if (radiometer.ok && wind.ok()) {
    wvr::FastSwitchingInput input;
    const wvr::BrokenPowerLawFit fit = radiometer.fit;
    input.uncorrected = wvr::PathStructureFunction::from_function(
        [fit](double d) { return fit.evaluate_m2(d); },
        fit.saturation_m2 > 0 ? fit.saturation_m2 : std::numeric_limits<double>::infinity(),
        "radiometer fit");
    if (after.ok) {
      const wvr::BrokenPowerLawFit corrected = after.fit;
      input.corrected = wvr::PathStructureFunction::from_function(
          [corrected](double d) { return corrected.evaluate_m2(d); },
          corrected.saturation_m2 > 0 ? corrected.saturation_m2
                                      : std::numeric_limits<double>::infinity(),
          "corrected calibrator fit");
    }
    input.wind_speed_m_s = wind.speed_m_s;
    input.layer_height_m = o.advice_layer_height_m;
    input.calibrator_separation_deg = o.advice_separation_deg;
    input.freq_ghz = night_obs_freq_ghz(p.night);
    input.target_rms_deg = o.advice_target_rms_deg;
    try {
      const wvr::FastSwitchingAdvice advice = wvr::advise_fast_switching(input);
      j["fast_switching"] = {
          {"method",
           "Holdaway fast-switching rule: sigma = (2 pi nu / c) sqrt(D(v t_cyc / 2 + h theta))"},
          {"freq_ghz", input.freq_ghz},
          {"target_rms_deg", input.target_rms_deg},
          {"layer_height_m", input.layer_height_m},
          {"calibrator_separation_deg", input.calibrator_separation_deg},
          {"cycle_time_s_uncorrected", number(advice.uncorrected.cycle_time_s)},
          {"cycle_time_s_corrected",
           advice.corrected ? number(advice.corrected->cycle_time_s) : nullptr},
          {"cycle_time_gain", number(advice.cycle_time_gain)},
          {"report", advice.brief_report()}};
    } catch (const wvr::InvalidInput& e) {
      j["fast_switching"] = {{"status", e.what()}};
    }
  } else {
    j["fast_switching"] = {
        {"status", "not available: needs the radiometer structure function and a wind estimate"}};
  }
  j["notes"] = diagnosis.notes;
  out.json = j;
  out.diagnosis = diagnosis;
  return out;
}

namespace {

void print_text(const DiagnosedNight& d) {
  const auto& s = d.json["summary"];
  std::cout << "scale " << s["scale"] << ", phase rms " << s["phase_rms_before_deg"] << " -> "
            << s["phase_rms_after_deg"] << " deg (median over baselines)\n";
  for (const auto& [verdict, count] : s["verdict_counts"].items()) {
    std::cout << "  " << verdict << ": " << count << " scans\n";
  }
  for (const std::string& note : d.diagnosis.notes) std::cout << "note: " << note << "\n";
  Table table({"start_s", "stop_s", "kind", "verdict", "reason"});
  for (const wvr::WindowDiagnosis& w : d.diagnosis.windows) {
    if (w.verdict == wvr::Verdict::kCorrected && !w.calibrator) continue;  // keep the list short
    table.add_row({fixed(w.start_s, 0), fixed(w.stop_s, 0), w.calibrator ? "calibrator" : "target",
                   wvr::to_string(w.verdict) + (w.inherited ? " (inherited)" : ""), w.reason});
  }
  table.print_text(std::cout);
  std::cout << "-> " << d.json["output"].get<std::string>() << "\n";
}

}  // namespace

void add_diagnose_command(CLI::App& app) {
  auto options = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand(
      "diagnose",
      "Judge each scan: corrected, quiet sky, dry turbulence, cloud, radiometer fault, scale off");
  add_common(*cmd, *options);
  cmd->add_option("--advice-layer-height-m", options->advice_layer_height_m,
                  "Turbulent layer height for fast-switching advice (m)")
      ->capture_default_str();
  cmd->add_option("--advice-separation-deg", options->advice_separation_deg,
                  "Calibrator-target separation for the advice (deg)")
      ->capture_default_str();
  cmd->add_option("--advice-target-rms-deg", options->advice_target_rms_deg,
                  "Residual phase rms the advice aims at (deg)")
      ->capture_default_str();
  cmd->callback([options] {
    const DiagnosedNight d = diagnose_and_write(*options);
    if (options->format == Format::kJson) {
      std::cout << d.json.dump(2) << "\n";
    } else {
      print_text(d);
    }
  });
}

}  // namespace skyphase
