#pragma once
// The field table of NightSummary (wvr/night.hpp): each item of a night's summary written
// once, with its name, member, units and meaning, so that Python's summary dict (both ways),
// its documentation and the `skyphase inspect` JSON follow from one table.

#include <span>
#include <string>
#include <variant>
#include <vector>

#include "wvr/night.hpp"

namespace wvr {

struct NightSummaryField {
  using S = NightSummary;

  const char* name;  // key of the Python summary dict
  std::variant<std::string S::*,
               std::size_t S::*,
               double S::*,
               bool S::*,
               std::vector<std::string> S::*,
               std::vector<double> S::*,
               std::vector<NightGap> S::*>
      member;
  // Key in the `skyphase inspect` JSON, whose names came first; nullptr: not written there.
  const char* json_name;
  const char* units;  // "1" for counts, fractions, flags and text
  const char* meaning;
};

std::span<const NightSummaryField> night_summary_fields();

}  // namespace wvr
