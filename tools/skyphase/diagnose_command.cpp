// skyphase diagnose: verdicts per scan and antenna, with the numbers behind them.
#include <cmath>
#include <iostream>
#include <limits>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "diagnose_output.hpp"
#include "output.hpp"
#include "path_prediction_json.hpp"
#include "pipeline.hpp"
#include "retrieval_json.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_switching.hpp"
#include "wvr/night_file.hpp"
#include "wvr/night_retrieval.hpp"

namespace skyphase {

DiagnosedNight diagnose_and_write(const CommonOptions& o) {
  DiagnosedNight out;
  out.processed = process_and_write(o, processing_options(o, wvr::NightStage::kTurbulence));
  const wvr::Night& night = out.processed.night;
  const wvr::NightProcessingResult& r = out.processed.result;
  const wvr::NightDiagnosis& diagnosis = *r.diagnosis;
  const wvr::CalibrationResult& calibration = *r.calibration;
  const wvr::CorrectionMetrics& metrics = *r.metrics;
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
                        {{"phase_rms_before_deg", json_number(w.rms_before_deg)},
                         {"phase_rms_after_deg", json_number(w.rms_after_deg)},
                         {"floor_deg", json_number(w.floor_deg)},
                         {"improvement_factor", json_number(w.improvement_factor)},
                         {"correlation", json_number(w.correlation)},
                         {"slope", json_number(w.slope)},
                         {"radiometer_path_rms_um", json_number(w.radiometer_path_rms_um)},
                         {"chi2_per_dof", json_number(w.chi2_per_dof)}}}});
  }
  j["summary"] = {{"windows", diagnosis.windows.size()},
                  {"verdict_counts", counts},
                  {"scale", json_number(calibration.scale)},
                  {"scale_sigma", json_number(calibration.scale_sigma)},
                  {"phase_rms_before_deg", json_number(metrics.phase_rms_before_deg)},
                  {"phase_rms_after_deg", json_number(metrics.phase_rms_after_deg)},
                  {"improvement_factor", json_number(metrics.improvement_factor)},
                  {"coherence_before", json_number(metrics.coherence_before)},
                  {"coherence_after", json_number(metrics.coherence_after)}};
  j["windows"] = windows;
  nlohmann::ordered_json thresholds_json;
  for (const wvr::DiagnosisThresholdField& f : wvr::diagnosis_threshold_fields())
    thresholds_json[f.name] = diagnosis.thresholds.*(f.member);
  j["thresholds"] = thresholds_json;
  j["thresholds_source"] = o.thresholds_file.empty() ? "defaults" : o.thresholds_file;
  const wvr::RadiometerFloor& floor = diagnosis.radiometer_floor;
  nlohmann::ordered_json model_error = nlohmann::ordered_json::array();
  for (std::size_t a = 0; a < diagnosis.antenna_names.size(); ++a) {
    const std::size_t nc = floor.model_error_k.size();
    model_error.push_back(
        {{"antenna", diagnosis.antenna_names[a]},
         {"model_error_k", std::vector<double>(floor.antenna_model_error_k.begin() + a * nc,
                                               floor.antenna_model_error_k.begin() + (a + 1) * nc)},
         {"systematic_offset_k",
          std::vector<double>(floor.systematic_offset_k.begin() + a * nc,
                              floor.systematic_offset_k.begin() + (a + 1) * nc)}});
  }
  j["radiometer_floor"] = {{"description", floor.describe()},
                           {"channels", floor.channel_names},
                           {"thermal_noise_k", floor.thermal_noise_k},
                           {"model_error_k", floor.model_error_k},
                           {"systematic_window_s", floor.systematic_window_s},
                           {"slow_common_rms_k", json_number(floor.slow_common_rms_k)},
                           {"antenna_drift_rms_k", json_number(floor.antenna_drift_rms_k)},
                           {"chi2_per_dof_thermal", json_number(floor.chi2_per_dof_thermal)},
                           {"chi2_per_dof_floor", json_number(floor.chi2_per_dof_floor)},
                           {"antennas", model_error}};
  j["site"] = site_json(r.site);
  j["obs_freq_ghz"] = r.obs_freq->freq_ghz;
  j["obs_freq_source"] = wvr::to_string(r.obs_freq->source);
  j["path_prediction"] = path_prediction_json(night, r);
  const nlohmann::ordered_json structure = turbulence_json(night, *r.turbulence);
  for (const auto& [key, value] : structure.items()) j[key] = value;
  nlohmann::ordered_json notes = diagnosis.notes;
  for (const std::string& note : r.notes) notes.push_back(note);
  j["notes"] = notes;
  out.json = j;
  return out;
}

namespace {

void print_text(const DiagnosedNight& d) {
  const auto& s = d.json["summary"];
  auto number = [&](const char* key) {
    return s[key].is_number() ? s[key].get<double>() : std::nan("");
  };
  std::cout << "scale " << with_uncertainty(number("scale"), number("scale_sigma"))
            << ", phase rms " << fixed(number("phase_rms_before_deg"), 2) << " -> "
            << fixed(number("phase_rms_after_deg"), 2) << " deg (median over baselines)\n";
  for (const auto& [verdict, count] : s["verdict_counts"].items()) {
    std::cout << "  " << verdict << ": " << count << " scans\n";
  }
  for (const auto& note : d.json["notes"]) std::cout << "note: " << note.get<std::string>() << "\n";
  Table table({"start_s", "stop_s", "kind", "verdict", "reason"});
  for (const wvr::WindowDiagnosis& w : d.processed.result.diagnosis->windows) {
    bool flagged = false;
    for (std::uint8_t f : w.antenna_faults) flagged |= f != 0;
    // Keep the list short: corrected target scans only when they flag an antenna.
    if (w.verdict == wvr::Verdict::kCorrected && !w.calibrator && !flagged) continue;
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
      "Judge each scan: corrected, quiet sky, dry turbulence, cloud, radiometer fault, scale off, "
      "outside retrieval domain");
  add_common(*cmd, *options);
  add_frequency_option(*cmd, *options);
  add_diagnosis_options(*cmd, *options);
  cmd->callback([options] {
    const DiagnosedNight d = diagnose_and_write(*options);
    if (options->format == Format::kJson) {
      print_json(d.json);
    } else {
      print_text(d);
    }
  });
}

void add_process_command(CLI::App& app) {
  auto options = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand(
      "process",
      "Every stage in one pass (retrieve, calibrate, correct, diagnose, turbulence): read once, "
      "write once");
  add_common(*cmd, *options);
  add_frequency_option(*cmd, *options);
  add_diagnosis_options(*cmd, *options);
  cmd->callback([options] {
    DiagnosedNight d = diagnose_and_write(*options);
    const wvr::NightRetrievalSummary s = wvr::summarize(d.processed.result.retrieval);
    nlohmann::ordered_json retrieval = {{"reused", d.processed.result.retrieval_reused}};
    retrieval.update(retrieval_summary_json(s));
    d.json["retrieval"] = std::move(retrieval);
    if (options->format == Format::kJson) {
      print_json(d.json);
    } else {
      std::cout << "PWV median " << fixed(s.pwv_median_mm, 3)
                << " mm (10-90 %: " << fixed(s.pwv_p10_mm, 3) << " - " << fixed(s.pwv_p90_mm, 3)
                << ")\n";
      print_text(d);
    }
  });
}

}  // namespace skyphase
