#include "path_prediction_json.hpp"

#include "diagnose_output.hpp"
#include "wvr/path_prediction.hpp"

namespace skyphase {

nlohmann::ordered_json path_prediction_json(const wvr::Night& night,
                                            const wvr::NightProcessingResult& r) {
  if (!r.path_prediction || !r.metrics) return nullptr;
  const wvr::PredictedPaths& p = *r.path_prediction;
  nlohmann::ordered_json j;
  j["method"] = wvr::to_string(p.method);
  j["message"] = p.message;
  j["structure_thickness_m"] = json_number(p.structure_thickness_m);
  if (p.method == wvr::PathPredictionMethod::kFrozenFlow) {
    j["wind_speed_m_s"] = json_number(p.wind_speed_m_s);
    j["wind_direction_to_deg"] = json_number(p.wind_direction_to_deg);
  }
  // Phases at the observing frequency; the calibrate stage has none, and then the first
  // calibrator row's frequency is used.
  double freq_ghz = 0.0;
  if (r.obs_freq) {
    freq_ghz = r.obs_freq->freq_ghz;
  } else if (!night.calibrator_phases.freq_ghz.empty()) {
    freq_ghz = night.calibrator_phases.freq_ghz.front();
  }
  nlohmann::ordered_json antennas = nlohmann::ordered_json::array();
  if (freq_ghz > 0.0) {
    const wvr::PathPredictionSummary s =
        wvr::summarize_path_prediction(p, *r.metrics, r.phase_per_path, freq_ghz);
    j["freq_ghz"] = freq_ghz;
    j["healthy_antennas"] = s.healthy_antennas;
    j["healthy_phase_rms_after_deg"] = json_number(s.healthy_phase_rms_after_deg);
    for (const wvr::PredictedAntennaResidual& a : s.antennas) {
      antennas.push_back(
          {{"antenna", night.array.antenna_names[a.antenna]},
           {"predicted_samples", a.predicted_samples},
           {"frozen_flow_samples", a.frozen_flow_samples},
           {"expected_residual_um", json_number(1e3 * a.expected_residual_mm)},
           {"expected_residual_deg", json_number(a.expected_residual_deg)},
           {"expected_phase_rms_after_deg", json_number(a.expected_phase_rms_after_deg)},
           {"phase_rms_after_deg", json_number(a.phase_rms_after_deg)}});
    }
  } else {
    for (std::size_t a = 0; a < p.predicted_samples.size(); ++a) {
      if (p.predicted_samples[a] == 0) continue;
      antennas.push_back({{"antenna", night.array.antenna_names[a]},
                          {"predicted_samples", p.predicted_samples[a]},
                          {"frozen_flow_samples", p.frozen_flow_samples[a]},
                          {"expected_residual_um", json_number(1e3 * p.expected_residual_mm[a])}});
    }
  }
  j["antennas"] = antennas;
  return j;
}

}  // namespace skyphase
