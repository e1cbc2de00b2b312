#include "arrays.hpp"

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "wvr/error.hpp"

namespace wvr::python {
namespace {

std::string index_text(std::size_t flat, const std::vector<py::ssize_t>& shape) {
  if (shape.size() <= 1) return "index " + std::to_string(flat);
  std::vector<std::size_t> index(shape.size());
  for (std::size_t i = shape.size(); i-- > 0;) {
    const auto extent = static_cast<std::size_t>(shape[i]);
    index[i] = flat % extent;
    flat /= extent;
  }
  std::string text = "[";
  for (std::size_t i = 0; i < index.size(); ++i) {
    if (i > 0) text += ", ";
    text += std::to_string(index[i]);
  }
  return text + "]";
}

std::vector<py::ssize_t> shape_of(const py::array& array) {
  return std::vector<py::ssize_t>(array.shape(), array.shape() + array.ndim());
}

}  // namespace

std::string shape_text(const std::vector<py::ssize_t>& shape) {
  std::string text = "(";
  for (std::size_t i = 0; i < shape.size(); ++i) {
    if (i > 0) text += ", ";
    text += shape[i] < 0 ? std::string("n") : std::to_string(shape[i]);
  }
  if (shape.size() == 1) text += ",";
  return text + ")";
}

py::array numeric_array(const py::handle& object, const std::string& field) {
  if (object.is_none()) throw InvalidInput(field + " is None; an array of numbers is needed");
  py::array array = py::array::ensure(object);
  if (!array) throw InvalidInput(field + ": expected an array of numbers");
  const char kind = array.dtype().kind();
  if (kind != 'f' && kind != 'i' && kind != 'u' && kind != 'b') {
    throw InvalidInput(field + ": expected numbers, got numpy dtype " +
                       py::str(array.dtype()).cast<std::string>());
  }
  return array;
}

void require_shape(const py::array& array,
                   const std::string& field,
                   const std::vector<py::ssize_t>& expected,
                   const std::string& axes) {
  const std::vector<py::ssize_t> actual = shape_of(array);
  bool match = actual.size() == expected.size();
  for (std::size_t i = 0; match && i < actual.size(); ++i) {
    match = expected[i] < 0 || actual[i] == expected[i];
  }
  if (!match) {
    throw InvalidInput(field + " has shape " + shape_text(actual) + ", expected " + axes + " = " +
                       shape_text(expected));
  }
}

std::vector<double> doubles_of_shape(const py::handle& object,
                                     const std::string& field,
                                     const std::vector<py::ssize_t>& expected,
                                     const std::string& axes) {
  const py::array array = numeric_array(object, field);
  require_shape(array, field, expected, axes);
  const DoubleArray values = DoubleArray::ensure(array);
  if (!values) throw py::error_already_set();
  return std::vector<double>(values.data(), values.data() + values.size());
}

std::vector<std::int64_t> integers_of_shape(const py::handle& object,
                                            const std::string& field,
                                            const std::vector<py::ssize_t>& expected,
                                            const std::string& axes,
                                            std::int64_t lo,
                                            std::int64_t hi) {
  const py::array array = numeric_array(object, field);
  if (array.dtype().kind() == 'f') {
    throw InvalidInput(field + ": expected integers, got numpy dtype " +
                       py::str(array.dtype()).cast<std::string>());
  }
  require_shape(array, field, expected, axes);
  const std::vector<py::ssize_t> shape = shape_of(array);
  std::vector<std::int64_t> out(static_cast<std::size_t>(array.size()));
  const auto out_of_range = [&](const std::string& value, std::size_t i) {
    const std::string at = shape.empty() ? std::string() : " at " + index_text(i, shape);
    return InvalidInput(field + " = " + value + at + " is outside [" + std::to_string(lo) + ", " +
                        std::to_string(hi) + "]");
  };
  if (array.dtype().kind() == 'u' && array.itemsize() == 8) {
    // The only integer type whose values int64 cannot hold.
    using Unsigned = py::array_t<std::uint64_t, py::array::c_style | py::array::forcecast>;
    const Unsigned values = Unsigned::ensure(array);
    for (std::size_t i = 0; i < out.size(); ++i) {
      if (values.data()[i] > static_cast<std::uint64_t>(hi)) {
        throw out_of_range(std::to_string(values.data()[i]), i);
      }
      out[i] = static_cast<std::int64_t>(values.data()[i]);
    }
  } else {
    using Signed = py::array_t<std::int64_t, py::array::c_style | py::array::forcecast>;
    const Signed values = Signed::ensure(array);
    std::copy(values.data(), values.data() + values.size(), out.begin());
  }
  for (std::size_t i = 0; i < out.size(); ++i) {
    if (out[i] < lo || out[i] > hi) throw out_of_range(std::to_string(out[i]), i);
  }
  return out;
}

double number_of(const py::handle& object, const std::string& field) {
  const py::array array = numeric_array(object, field);
  if (array.ndim() != 0 || array.dtype().kind() == 'b') {
    throw InvalidInput(field + ": expected a single number");
  }
  return doubles_of_shape(array, field, {}, "a number").front();
}

std::int64_t integer_of(const py::handle& object,
                        const std::string& field,
                        std::int64_t lo,
                        std::int64_t hi) {
  const py::array array = numeric_array(object, field);
  if (array.ndim() != 0 || array.dtype().kind() == 'b') {
    throw InvalidInput(field + ": expected a single integer");
  }
  return integers_of_shape(array, field, {}, "an integer", lo, hi).front();
}

std::string text_of(const py::handle& object, const std::string& field) {
  if (py::isinstance<py::str>(object) || py::isinstance<py::bytes>(object)) {
    return object.cast<std::string>();
  }
  throw InvalidInput(field + ": expected a str, got " +
                     py::str(py::type::handle_of(object).attr("__name__")).cast<std::string>());
}

std::vector<std::string> texts_of(const py::handle& object, const std::string& field) {
  if (object.is_none() || py::isinstance<py::str>(object) || py::isinstance<py::bytes>(object) ||
      !py::isinstance<py::iterable>(object)) {
    throw InvalidInput(field + ": expected a sequence of str");
  }
  std::vector<std::string> out;
  for (const py::handle item : py::reinterpret_borrow<py::iterable>(object)) {
    out.push_back(text_of(item, field + "[" + std::to_string(out.size()) + "]"));
  }
  return out;
}

}  // namespace wvr::python
