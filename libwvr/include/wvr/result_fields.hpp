#pragma once
// Field tables of result types: each field of a result written once, with its name, member,
// axes and units, so that the night-file result group, the Python properties and the
// documentation checks all follow from one table.
//
// Axes are one letter per dimension, resolved by the result type's own axis_extent(); the
// letters each type uses are listed beside its table. A scalar is an array of no axes (""),
// stored as an HDF5 scalar dataset; a bool is stored as one uint8 (1 true, 0 false).

#include <cstdint>
#include <span>
#include <variant>
#include <vector>

namespace wvr {

template <typename Result>
struct ResultArrayField {
  using DoubleMember = std::vector<double> Result::*;
  using FlagMember = std::vector<std::uint8_t> Result::*;
  using ScalarMember = double Result::*;
  using ChoiceMember = bool Result::*;

  const char* name;  // result dataset and Python property
  std::variant<DoubleMember, FlagMember, ScalarMember, ChoiceMember> member;
  const char* axes;   // e.g. "aw": [antenna, window]; "" for a scalar
  const char* units;  // "1" for dimensionless values and flags
  const char* meaning;
  // Absent from files written before the field existed: reading leaves the member as it was.
  bool optional = false;
};

}  // namespace wvr
