#pragma once
// Python properties of a result type from its field table (wvr/result_fields.hpp): arrays as
// read-only numpy views owned by the result object (no copy), scalars as float or bool, and a
// scalars() dict of the scalar fields for callers that copy them all.

#include <pybind11/pybind11.h>

#include <span>
#include <stdexcept>
#include <string>
#include <type_traits>
#include <variant>
#include <vector>

#include "arrays.hpp"
#include "wvr/result_fields.hpp"

namespace wvr::python {

// One read-only property per field of `fields` on `cls`, documented by the field's meaning,
// axes and units; `axis_names` explains the axis letters, e.g. "a antennas, s segments".
template <typename Result, typename... Options>
void bind_result_fields(py::class_<Result, Options...>& cls,
                        std::span<const ResultArrayField<Result>> fields,
                        const char* axis_names) {
  for (const ResultArrayField<Result>& field : fields) {
    const bool scalar = *field.axes == '\0';
    const std::string doc =
        std::string(field.meaning) + (scalar ? "" : std::string(" [") + field.axes + "]") + " (" +
        field.units + ")" + (scalar ? "." : std::string("; axes: ") + axis_names + ".");
    std::visit(
        [&](auto member) {
          using Member = std::decay_t<decltype(std::declval<const Result&>().*member)>;
          if constexpr (std::is_arithmetic_v<Member>) {
            cls.def_property_readonly(
                field.name, [member](const Result& r) { return r.*member; }, doc.c_str());
          } else {
            const char* axes = field.axes;
            const char* name = field.name;
            auto view = [member, axes, name](const py::object& self) {
              const Result& r = self.cast<const Result&>();
              std::vector<py::ssize_t> shape;
              std::size_t count = 1;
              for (const char* axis = axes; *axis != '\0'; ++axis) {
                count *= axis_extent(r, *axis);
                shape.push_back(static_cast<py::ssize_t>(axis_extent(r, *axis)));
              }
              // A view past the vector's end would read foreign memory: refuse it.
              if ((r.*member).size() != count)
                throw std::logic_error(std::string(name) + " has " +
                                       std::to_string((r.*member).size()) +
                                       " values, its axes need " + std::to_string(count));
              return read_only_view(r.*member, shape, self);
            };
            cls.def_property_readonly(field.name, view, doc.c_str());
          }
        },
        field.member);
  }
  cls.def(
      "scalars",
      [fields](const Result& r) {
        py::dict scalars;
        for (const ResultArrayField<Result>& field : fields) {
          std::visit(
              [&](auto member) {
                using Member = std::decay_t<decltype(std::declval<const Result&>().*member)>;
                if constexpr (std::is_arithmetic_v<Member>) scalars[field.name] = r.*member;
              },
              field.member);
        }
        return scalars;
      },
      "The scalar fields as a dict, name -> float or bool, in the field table's order (the "
      "properties of the same names).");
}

}  // namespace wvr::python
