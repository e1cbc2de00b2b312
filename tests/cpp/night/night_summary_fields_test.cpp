// The field table of NightSummary: names and JSON names are unique, and every field is in the
// Python stub's summary dict.
#include "wvr/night_summary_fields.hpp"

#include <gtest/gtest.h>

#include <set>
#include <string>

#include "core/result_field_checks.hpp"
#include "test_util.hpp"

namespace wvr {
namespace {

TEST(NightSummaryFields, NamesAndJsonNamesAreUnique) {
  std::set<std::string> names, json_names;
  for (const NightSummaryField& field : night_summary_fields()) {
    EXPECT_TRUE(names.insert(field.name).second) << field.name;
    if (field.json_name != nullptr) {
      EXPECT_TRUE(json_names.insert(field.json_name).second) << field.json_name;
    }
  }
}

TEST(NightSummaryFields, EveryFieldIsInThePythonStub) {
  const std::string stub = test::text_of(test::testdata("../bindings/python/wvr/_core.pyi"));
  const std::string dict = test::section_of(stub, "class NightSummaryDict(TypedDict):", "\n\n");
  ASSERT_FALSE(dict.empty());
  for (const NightSummaryField& field : night_summary_fields()) {
    EXPECT_NE(dict.find(std::string("\n    ") + field.name + ":"), std::string::npos)
        << field.name << " is not in NightSummaryDict of _core.pyi";
  }
}

}  // namespace
}  // namespace wvr
