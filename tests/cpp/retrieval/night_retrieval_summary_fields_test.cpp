// The field table of the retrieval summary: names unique, each field filled by summarize(), and
// the Python stub's TypedDict naming exactly these fields.
#include <gtest/gtest.h>

#include <cmath>
#include <regex>
#include <set>
#include <string>
#include <type_traits>
#include <variant>

#include "core/result_field_checks.hpp"
#include "test_util.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr {
namespace {

TEST(NightRetrievalSummaryFields, NamesAreUniqueAndEveryFieldIsFilled) {
  NightRetrieval r;
  r.antennas = 2;
  r.samples = 3;
  r.windows = 1;
  r.channels = 2;
  r.pwv_mm = {1.0, 1.1, 1.2, 1.3, 1.4, 1.5};
  r.chi2_per_dof = {0.9, 1.0, 1.1, 1.2, 1.3, 1.4};
  r.flags = {0, 0, 0, 0, 0, kFlagFitFailed};
  r.path_sensitivity_k_per_mm = {20.0, 10.0, 22.0, 12.0};
  const NightRetrievalSummary s = summarize(r);
  std::set<std::string> names;
  for (const NightRetrievalSummaryField& field : night_retrieval_summary_fields()) {
    EXPECT_TRUE(names.insert(field.name).second) << "duplicate field " << field.name;
    std::visit(
        [&](auto member) {
          const auto& value = s.*member;
          if constexpr (std::is_same_v<std::decay_t<decltype(value)>, std::vector<double>>) {
            EXPECT_EQ(value.size(), r.channels) << field.name;
            for (double v : value) EXPECT_GT(v, 0.0) << field.name;
          } else {
            EXPECT_GT(value, 0) << field.name;
          }
        },
        field.member);
  }
  EXPECT_EQ(s.samples, 6u);
  EXPECT_EQ(s.samples_flagged, 1u);
  EXPECT_DOUBLE_EQ(s.pwv_median_mm, 1.2);
  EXPECT_DOUBLE_EQ(s.path_sensitivity_k_per_mm[1], 11.0);
}

TEST(NightRetrievalSummaryFields, ThePythonStubNamesExactlyTheseFields) {
  const std::string stub = test::text_of(test::testdata("../bindings/python/wvr/_core.pyi"));
  const std::string typed_dict =
      test::section_of(stub, "class NightRetrievalSummary(TypedDict):", "\nclass ");
  ASSERT_FALSE(typed_dict.empty());
  std::set<std::string> in_stub;
  const std::regex entry(R"(\n    (\w+): )");
  for (auto it = std::sregex_iterator(typed_dict.begin(), typed_dict.end(), entry);
       it != std::sregex_iterator(); ++it)
    in_stub.insert((*it)[1].str());
  std::set<std::string> in_table;
  for (const NightRetrievalSummaryField& field : night_retrieval_summary_fields())
    in_table.insert(field.name);
  EXPECT_EQ(in_stub, in_table);
}

}  // namespace
}  // namespace wvr
