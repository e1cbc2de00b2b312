#pragma once
// The diagnosis of a night as skyphase diagnose prints it (JSON), shared with skyphase report.

#include <nlohmann/json.hpp>

#include "pipeline.hpp"
#include "wvr/diagnosis.hpp"

namespace skyphase {

struct DiagnosedNight {
  nlohmann::ordered_json json;
  wvr::NightDiagnosis diagnosis;
};

// Computes what the night lacks (retrieval, calibration, correction), diagnoses it, writes the
// output night with every result group and returns the JSON summary.
DiagnosedNight diagnose_and_write(const CommonOptions& options);

}  // namespace skyphase
