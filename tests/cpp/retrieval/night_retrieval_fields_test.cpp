// The field table of NightRetrieval: the result group round-trips through it, and every field
// is documented where users read about it (FORMAT.md, the Python stub).
#include <gtest/gtest.h>

#include <fstream>
#include <set>
#include <sstream>

#include "test_util.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr {
namespace {

std::string text_of(const std::filesystem::path& path) {
  std::ifstream in(path);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

NightRetrieval numbered_retrieval() {
  NightRetrieval r;
  r.antennas = 2;
  r.samples = 5;
  r.windows = 3;
  r.channels = 4;
  double next = 0.5;
  for (const ResultArrayField<NightRetrieval>& field : night_retrieval_fields()) {
    std::size_t n = 1;
    for (const char* axis = field.axes; *axis != '\0'; ++axis) n *= axis_extent(r, *axis);
    std::visit(
        [&](auto member) {
          auto& values = r.*member;
          values.resize(n);
          for (auto& v : values) v = static_cast<std::decay_t<decltype(v)>>(next += 1.0);
        },
        field.member);
  }
  return r;
}

TEST(NightRetrievalFields, EveryFieldRoundTripsThroughTheResultGroup) {
  const NightRetrieval r = numbered_retrieval();
  const ResultGroup group = to_result_group(r, Night{});
  EXPECT_EQ(group.datasets.size(), night_retrieval_fields().size());
  const NightRetrieval back = retrieval_from_result_group(group);
  std::set<std::string> names;
  for (const ResultArrayField<NightRetrieval>& field : night_retrieval_fields()) {
    EXPECT_TRUE(names.insert(field.name).second) << "duplicate field " << field.name;
    std::visit([&](auto member) { EXPECT_EQ(back.*member, r.*member) << field.name; },
               field.member);
  }
}

TEST(NightRetrievalFields, EveryFieldIsDocumentedInTheFormatAndThePythonStub) {
  const std::string format = text_of(test::testdata("../libwvr/FORMAT.md"));
  const std::string stub = text_of(test::testdata("../bindings/python/wvr/_core.pyi"));
  ASSERT_FALSE(format.empty());
  ASSERT_FALSE(stub.empty());
  for (const ResultArrayField<NightRetrieval>& field : night_retrieval_fields()) {
    EXPECT_NE(format.find(std::string("`") + field.name + "`"), std::string::npos)
        << field.name << " is not in libwvr/FORMAT.md";
    EXPECT_NE(stub.find(std::string("def ") + field.name + "(self)"), std::string::npos)
        << field.name << " is not in _core.pyi";
  }
}

}  // namespace
}  // namespace wvr
