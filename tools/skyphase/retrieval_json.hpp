#pragma once
// The retrieval summary as skyphase prints it (JSON), from the library's field table.

#include <nlohmann/json.hpp>

#include "wvr/night_retrieval.hpp"

namespace skyphase {

// One entry per field of wvr::night_retrieval_summary_fields(), in its order; numbers that
// are not finite are null.
nlohmann::ordered_json retrieval_summary_json(const wvr::NightRetrievalSummary& summary);

}  // namespace skyphase
