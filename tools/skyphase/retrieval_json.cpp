#include "retrieval_json.hpp"

#include <type_traits>
#include <variant>
#include <vector>

#include "diagnose_output.hpp"

namespace skyphase {

nlohmann::ordered_json retrieval_summary_json(const wvr::NightRetrievalSummary& summary) {
  nlohmann::ordered_json j = nlohmann::ordered_json::object();
  for (const wvr::NightRetrievalSummaryField& field : wvr::night_retrieval_summary_fields()) {
    std::visit(
        [&](auto member) {
          const auto& value = summary.*member;
          using Value = std::decay_t<decltype(value)>;
          if constexpr (std::is_same_v<Value, std::vector<double>>) {
            nlohmann::ordered_json values = nlohmann::ordered_json::array();
            for (double v : value) values.push_back(json_number(v));
            j[field.name] = std::move(values);
          } else if constexpr (std::is_same_v<Value, double>) {
            j[field.name] = json_number(value);
          } else {
            j[field.name] = value;
          }
        },
        field.member);
  }
  return j;
}

}  // namespace skyphase
