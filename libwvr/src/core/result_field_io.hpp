#pragma once
// Result groups from field tables (wvr/result_fields.hpp): every field of a result written to,
// and read back from, its night-file result group by one loop.

#include <string>
#include <type_traits>
#include <variant>

#include "wvr/error.hpp"
#include "wvr/night.hpp"
#include "wvr/result_fields.hpp"

namespace wvr::detail {

// The shape of `field` given the length of each axis letter; {} for a scalar.
template <typename Result, typename AxisExtent>
std::vector<std::size_t> field_shape(const ResultArrayField<Result>& field, AxisExtent extent) {
  std::vector<std::size_t> shape;
  for (const char* axis = field.axes; *axis != '\0'; ++axis) shape.push_back(extent(*axis));
  return shape;
}

// The stored values of a member: arrays as they are, a scalar as one value.
inline const std::vector<double>& stored_values(const std::vector<double>& v) { return v; }
inline const std::vector<std::uint8_t>& stored_values(const std::vector<std::uint8_t>& v) {
  return v;
}
inline std::vector<double> stored_values(double v) { return {v}; }
inline std::vector<std::uint8_t> stored_values(bool v) { return {static_cast<std::uint8_t>(v)}; }

template <typename Result>
void write_result_fields(ResultGroup& group,
                         const Result& result,
                         std::span<const ResultArrayField<Result>> fields) {
  const auto extent = [&](char axis) { return axis_extent(result, axis); };
  for (const ResultArrayField<Result>& field : fields) {
    std::visit(
        [&](auto member) {
          group.datasets.push_back({field.name,
                                    field_shape(field, extent),
                                    stored_values(result.*member),
                                    field.units,
                                    {}});
        },
        field.member);
  }
}

// Reads every field into `result`; `extent(axis)` gives each axis's length in the stored
// group. Throws InvalidInput starting with `source` (when not empty) and naming the dataset when
// a required one is missing, or one has another shape or type. A scalar may be stored with any
// shape of one value.
template <typename Result, typename AxisExtent>
void read_result_fields(const ResultGroup& group,
                        Result& result,
                        std::span<const ResultArrayField<Result>> fields,
                        AxisExtent extent,
                        const std::string& source = "") {
  for (const ResultArrayField<Result>& field : fields) {
    const std::string where =
        (source.empty() ? "" : source + ": ") + "/results/" + group.stage + "/" + field.name;
    const ResultDataset* d = group.find(field.name);
    if (d == nullptr) {
      if (field.optional) continue;
      throw InvalidInput(where + " is missing");
    }
    std::visit(
        [&](auto member) {
          using Member = std::decay_t<decltype(result.*member)>;
          using Stored = std::decay_t<decltype(stored_values(Member{}))>;
          const auto* values = std::get_if<Stored>(&d->values);
          const bool scalar = *field.axes == '\0';
          if (values == nullptr) {
            throw InvalidInput(where + " does not hold " +
                               (std::is_same_v<Stored, std::vector<double>> ? "double" : "uint8") +
                               " values");
          }
          if (scalar ? values->size() != 1 : d->shape != field_shape(field, extent))
            throw InvalidInput(where + " has an unexpected shape");
          if constexpr (std::is_same_v<Member, Stored>) {
            result.*member = *values;
          } else {
            result.*member = static_cast<Member>(values->front());
          }
        },
        field.member);
  }
}

// As above, with the axis lengths of `result` itself (set before reading).
template <typename Result>
void read_result_fields(const ResultGroup& group,
                        Result& result,
                        std::span<const ResultArrayField<Result>> fields) {
  read_result_fields(group, result, fields, [&](char axis) { return axis_extent(result, axis); });
}

}  // namespace wvr::detail
