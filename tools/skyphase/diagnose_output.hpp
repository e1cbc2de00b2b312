#pragma once
// The diagnosis of a night as skyphase diagnose prints it (JSON), shared with skyphase process
// and report. Rendering only: every number comes from the library's night pipeline.

#include <nlohmann/json.hpp>

#include "pipeline.hpp"
#include "wvr/night_turbulence.hpp"

namespace skyphase {

struct DiagnosedNight {
  nlohmann::ordered_json json;
  Processed processed;
};

// A JSON number, or null when not finite.
nlohmann::ordered_json json_number(double v);

// The "structure_function", "wind_speed_m_s", "wind_direction_deg", "wind" and
// "fast_switching" entries of the summary.
nlohmann::ordered_json turbulence_json(const wvr::Night& night, const wvr::NightTurbulence& t);

// Runs every stage, writes the output night with every result group and returns the JSON
// summary.
DiagnosedNight diagnose_and_write(const CommonOptions& options);

}  // namespace skyphase
