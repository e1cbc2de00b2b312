#pragma once
// Result groups from field tables (wvr/result_fields.hpp): every array of a result written to,
// and read back from, its night-file result group by one loop.

#include <string>
#include <variant>

#include "wvr/error.hpp"
#include "wvr/night.hpp"
#include "wvr/result_fields.hpp"

namespace wvr::detail {

// The shape of `field` in `result` (axis_extent of each axis letter).
template <typename Result>
std::vector<std::size_t> field_shape(const Result& result, const ResultArrayField<Result>& field) {
  std::vector<std::size_t> shape;
  for (const char* axis = field.axes; *axis != '\0'; ++axis)
    shape.push_back(axis_extent(result, *axis));
  return shape;
}

template <typename Result>
void write_result_fields(ResultGroup& group,
                         const Result& result,
                         std::span<const ResultArrayField<Result>> fields) {
  for (const ResultArrayField<Result>& field : fields) {
    std::visit(
        [&](auto member) {
          group.datasets.push_back(
              {field.name, field_shape(result, field), result.*member, field.units, {}});
        },
        field.member);
  }
}

// Reads every field; the result's extents must be set first. Throws InvalidInput naming the
// dataset when it is missing or has another shape or type.
template <typename Result>
void read_result_fields(const ResultGroup& group,
                        Result& result,
                        std::span<const ResultArrayField<Result>> fields) {
  for (const ResultArrayField<Result>& field : fields) {
    std::visit(
        [&](auto member) {
          using Vector = std::decay_t<decltype(result.*member)>;
          const ResultDataset* d = group.find(field.name);
          if (d == nullptr || d->shape != field_shape(result, field) ||
              !std::holds_alternative<Vector>(d->values)) {
            throw InvalidInput("/results/" + group.stage + "/" + field.name +
                               " is missing or has an unexpected shape or type");
          }
          result.*member = std::get<Vector>(d->values);
        },
        field.member);
  }
}

}  // namespace wvr::detail
