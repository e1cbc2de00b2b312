// The field table of NightRetrieval: the result group round-trips through it, and every field
// is documented where users read about it (FORMAT.md, the Python stub).
#include <gtest/gtest.h>

#include "core/result_field_checks.hpp"
#include "test_util.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr {
namespace {

NightRetrieval numbered_retrieval() {
  NightRetrieval r;
  r.antennas = 2;
  r.samples = 5;
  r.windows = 3;
  r.channels = 4;
  test::fill_numbered(r, night_retrieval_fields(), [&](char axis) { return axis_extent(r, axis); });
  return r;
}

TEST(NightRetrievalFields, EveryFieldRoundTripsThroughTheResultGroup) {
  const NightRetrieval r = numbered_retrieval();
  const ResultGroup group = to_result_group(r, Night{});
  EXPECT_EQ(group.datasets.size(), night_retrieval_fields().size());
  test::expect_fields_equal(retrieval_from_result_group(group), r, night_retrieval_fields());
}

TEST(NightRetrievalFields, EveryFieldIsDocumentedInTheFormatAndThePythonStub) {
  const std::string format = test::text_of(test::testdata("../libwvr/FORMAT.md"));
  const std::string stub = test::text_of(test::testdata("../bindings/python/wvr/_core.pyi"));
  test::expect_fields_documented(night_retrieval_fields(),
                                 test::section_of(format, "`/results/retrieval`", "`/results/"),
                                 test::section_of(stub, "class NightRetrieval:", "\nclass "));
}

}  // namespace
}  // namespace wvr
