#pragma once
// Checks shared by the field tables' tests (wvr/result_fields.hpp): a result whose every field
// holds distinct values, every field compared after a round trip, and every field named where
// users read about it (libwvr/FORMAT.md, the Python stub).

#include <gtest/gtest.h>

#include <fstream>
#include <set>
#include <sstream>
#include <string>
#include <type_traits>
#include <variant>

#include "test_util.hpp"
#include "wvr/result_fields.hpp"

namespace wvr::test {

// Sets every field of `result` to values that differ from each other and from the defaults,
// arrays sized by `extent(axis)`.
template <typename Result, typename AxisExtent>
void fill_numbered(Result& result,
                   std::span<const ResultArrayField<Result>> fields,
                   AxisExtent extent) {
  double next = 0.5;
  bool choice = false;
  for (const ResultArrayField<Result>& field : fields) {
    std::size_t n = 1;
    for (const char* axis = field.axes; *axis != '\0'; ++axis) n *= extent(*axis);
    std::visit(
        [&](auto member) {
          auto& value = result.*member;
          using Member = std::decay_t<decltype(value)>;
          if constexpr (std::is_same_v<Member, bool>) {
            value = (choice = !choice);
          } else if constexpr (std::is_arithmetic_v<Member>) {
            value = (next += 1.0);
          } else {
            value.resize(n);
            for (auto& v : value) v = static_cast<std::decay_t<decltype(v)>>(next += 1.0);
          }
        },
        field.member);
  }
}

// Every field of `back` equals the one of `original`; names are unique.
template <typename Result>
void expect_fields_equal(const Result& back,
                         const Result& original,
                         std::span<const ResultArrayField<Result>> fields) {
  std::set<std::string> names;
  for (const ResultArrayField<Result>& field : fields) {
    EXPECT_TRUE(names.insert(field.name).second) << "duplicate field " << field.name;
    std::visit([&](auto member) { EXPECT_EQ(back.*member, original.*member) << field.name; },
               field.member);
  }
}

inline std::string text_of(const std::filesystem::path& path) {
  std::ifstream in(path);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

// The part of `text` from `start` to the next `stop` after it (to the end without one); empty
// when `start` is not found.
inline std::string section_of(const std::string& text,
                              const std::string& start,
                              const std::string& stop) {
  const std::size_t begin = text.find(start);
  if (begin == std::string::npos) return "";
  const std::size_t end = text.find(stop, begin + start.size());
  return text.substr(begin, end == std::string::npos ? std::string::npos : end - begin);
}

// Every field is named in `format_section` (as `name`) and is a property in `stub_class`.
template <typename Result>
void expect_fields_documented(std::span<const ResultArrayField<Result>> fields,
                              const std::string& format_section,
                              const std::string& stub_class) {
  ASSERT_FALSE(format_section.empty()) << "FORMAT.md section not found";
  ASSERT_FALSE(stub_class.empty()) << "class not found in the Python stub";
  for (const ResultArrayField<Result>& field : fields) {
    EXPECT_NE(format_section.find(std::string("`") + field.name + "`"), std::string::npos)
        << field.name << " is not in its libwvr/FORMAT.md section";
    EXPECT_NE(stub_class.find(std::string("def ") + field.name + "(self)"), std::string::npos)
        << field.name << " is not in its class of _core.pyi";
  }
}

}  // namespace wvr::test
