#pragma once
// The "path_prediction" entry of the skyphase correct, diagnose and process JSON: the antennas
// whose radiometer gave no samples and were corrected with a predicted path, each with its
// expected residual beside the healthy antennas' residual. Rendering only: the numbers come from
// the library (wvr/path_prediction.hpp).

#include <nlohmann/json.hpp>

#include "wvr/night.hpp"
#include "wvr/night_processing.hpp"

namespace skyphase {

// null when the night needed no prediction (or the stages did not reach the metrics).
nlohmann::ordered_json path_prediction_json(const wvr::Night& night,
                                            const wvr::NightProcessingResult& result);

}  // namespace skyphase
