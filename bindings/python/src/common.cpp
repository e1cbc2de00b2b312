#include "common.hpp"

#include <algorithm>

#include "wvr/error.hpp"

namespace wvr::python {

DoubleArray as_double_array(const py::handle& object, const std::string& field) {
  // numpy turns None into NaN without complaint; say what is wrong instead.
  if (object.is_none()) throw InvalidInput(field + " is None; a number or an array is needed");
  DoubleArray array = DoubleArray::ensure(object);
  if (!array) throw InvalidInput(field + ": expected a number or an array of numbers");
  return array;
}

std::vector<double> as_vector(const py::handle& object, const std::string& field) {
  const DoubleArray array = as_double_array(object, field);
  if (array.ndim() > 1) {
    throw InvalidInput(field + " has " + std::to_string(array.ndim()) +
                       " dimensions; a number or a one-dimensional array is needed");
  }
  return std::vector<double>(array.data(), array.data() + array.size());
}

void make_read_only(py::array& array) { array.attr("flags").attr("writeable") = false; }

py::array_t<double> read_only_array(const std::vector<double>& values) {
  py::array_t<double> array(static_cast<py::ssize_t>(values.size()));
  std::copy(values.begin(), values.end(), array.mutable_data());
  make_read_only(array);
  return array;
}

}  // namespace wvr::python
