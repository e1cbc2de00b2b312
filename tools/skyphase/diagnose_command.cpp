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

DiagnosedNight diagnose_and_write(const CommonOptions& o) {
  // Thresholds first: a mistake in the file should not wait for the retrieval.
  const wvr::DiagnosisThresholds thresholds =
      o.thresholds_file.empty() ? wvr::DiagnosisThresholds{}
                                : wvr::load_diagnosis_thresholds(o.thresholds_file);
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
      wvr::diagnose_night(p.night, p.retrieval, p.paths, metrics, p.phase_per_path, thresholds);
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
  const nlohmann::ordered_json structure = structure_wind_and_advice(p, diagnosis, metrics, o);
  for (const auto& [key, value] : structure.items()) j[key] = value;
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
  add_diagnosis_options(*cmd, *options);
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
