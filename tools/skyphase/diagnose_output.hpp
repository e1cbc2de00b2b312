#pragma once
// The diagnosis of a night as skyphase diagnose prints it (JSON), shared with skyphase report.

#include <nlohmann/json.hpp>

#include "pipeline.hpp"
#include "wvr/correction.hpp"
#include "wvr/diagnosis.hpp"

namespace skyphase {

struct DiagnosedNight {
  nlohmann::ordered_json json;
  wvr::NightDiagnosis diagnosis;
};

// A JSON number, or null when not finite.
nlohmann::ordered_json json_number(double v);

// Structure functions (radiometer, calibrator before/after, by lag), wind and fast-switching
// advice: the "structure_function", "wind_speed_m_s", "wind_direction_deg", "wind" and
// "fast_switching" entries of the summary.
nlohmann::ordered_json structure_wind_and_advice(const Prepared& prepared,
                                                 const wvr::NightDiagnosis& diagnosis,
                                                 const wvr::CorrectionMetrics& metrics,
                                                 const CommonOptions& options);

// Computes what the night lacks (retrieval, calibration, correction), diagnoses it, writes the
// output night with every result group and returns the JSON summary.
DiagnosedNight diagnose_and_write(const CommonOptions& options);

}  // namespace skyphase
