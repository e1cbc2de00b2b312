#pragma once
// numpy arrays of the night, simulator and retrieval bindings: read-only views of C++ vectors
// that a Python object owns (no copy of large series), and checked conversions of numpy input
// with an expected shape whose errors name the field and the shapes.

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <cstdint>
#include <string>
#include <vector>

#include "common.hpp"

namespace wvr::python {

// A read-only numpy array of `shape` over `data`, kept alive by `owner` (the Python object
// that holds the C++ value). The owner must never change the vector while Python lives:
// the bound value types are immutable from Python.
template <typename T>
py::array read_only_view(const T* data, const std::vector<py::ssize_t>& shape, py::handle owner) {
  py::array out(py::dtype::of<T>(), shape, data, owner);
  make_read_only(out);
  return out;
}

template <typename T>
py::array read_only_view(const std::vector<T>& values,
                         const std::vector<py::ssize_t>& shape,
                         py::handle owner) {
  return read_only_view(values.data(), shape, owner);
}

// Writes "(6, 600, 4)"; a negative extent is written as "n" (any length).
std::string shape_text(const std::vector<py::ssize_t>& shape);

// `object` as a numpy array of numbers (bool, integer or floating point); throws InvalidInput
// naming `field` for None, strings, objects or complex numbers.
py::array numeric_array(const py::handle& object, const std::string& field);

// Throws InvalidInput "<field> has shape (a, b), expected <axes> = (c, d)" unless `array` has
// `expected` shape; negative expected extents match any length.
void require_shape(const py::array& array,
                   const std::string& field,
                   const std::vector<py::ssize_t>& expected,
                   const std::string& axes);

// The values of a numeric array of `expected` shape (see require_shape), row-major.
std::vector<double> doubles_of_shape(const py::handle& object,
                                     const std::string& field,
                                     const std::vector<py::ssize_t>& expected,
                                     const std::string& axes);

// Integer values (bool or integer dtype; floating point is refused so that 0.5 never
// truncates silently) of `expected` shape, each within [lo, hi].
std::vector<std::int64_t> integers_of_shape(const py::handle& object,
                                            const std::string& field,
                                            const std::vector<py::ssize_t>& expected,
                                            const std::string& axes,
                                            std::int64_t lo,
                                            std::int64_t hi);

// A single number (Python or numpy scalar, or a 0-d array); throws InvalidInput naming `field`.
double number_of(const py::handle& object, const std::string& field);
// A single integer within [lo, hi]; throws InvalidInput naming `field`.
std::int64_t integer_of(const py::handle& object,
                        const std::string& field,
                        std::int64_t lo,
                        std::int64_t hi);
// A str (or bytes, decoded as UTF-8); throws InvalidInput naming `field`.
std::string text_of(const py::handle& object, const std::string& field);
// A sequence of str (list, tuple, numpy array of str or bytes); throws InvalidInput naming
// `field` for a bare string or non-text entries.
std::vector<std::string> texts_of(const py::handle& object, const std::string& field);

}  // namespace wvr::python
