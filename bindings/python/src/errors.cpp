// libwvr's C++ exceptions as Python exceptions:
//   wvr::Error             -> wvr.WvrError(Exception)
//   wvr::InvalidInput      -> wvr.WvrValueError(WvrError, ValueError)
//   wvr::NothingUsable     -> wvr.WvrNothingUsable(WvrError)
//   python::MissingKey     -> wvr.WvrKeyError(WvrError, KeyError)
//   other std::exception   -> wvr.WvrError (a failure inside a library the package uses)
// so callers can catch either the library's base error or the matching built-in error.
#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

// Owned references, created once at import and deliberately never released: translators may
// run until interpreter shutdown, and the module dict holds them too.
PyObject* g_wvr_error = nullptr;
PyObject* g_wvr_value_error = nullptr;
PyObject* g_wvr_key_error = nullptr;
PyObject* g_wvr_nothing_usable = nullptr;

}  // namespace

void export_errors(py::module_& m) {
  g_wvr_error = PyErr_NewExceptionWithDoc(
      "wvr.WvrError", "Base class of every error raised by libwvr.", PyExc_Exception, nullptr);
  if (g_wvr_error == nullptr) throw py::error_already_set();
  py::tuple bases = py::make_tuple(py::handle(g_wvr_error), py::handle(PyExc_ValueError));
  g_wvr_value_error = PyErr_NewExceptionWithDoc(
      "wvr.WvrValueError",
      "Bad input: out-of-range or non-finite values, malformed configuration, unreadable or "
      "inconsistent files. The message names the offending field and its value.",
      bases.ptr(), nullptr);
  if (g_wvr_value_error == nullptr) throw py::error_already_set();
  py::tuple key_bases = py::make_tuple(py::handle(g_wvr_error), py::handle(PyExc_KeyError));
  g_wvr_key_error = PyErr_NewExceptionWithDoc(
      "wvr.WvrKeyError", "A name that is not there, e.g. a dataset a result group does not hold.",
      key_bases.ptr(), nullptr);
  if (g_wvr_key_error == nullptr) throw py::error_already_set();
  g_wvr_nothing_usable = PyErr_NewExceptionWithDoc(
      "wvr.WvrNothingUsable",
      "Valid input holding nothing a stage can use (every radiometer sample flagged, no "
      "calibrator row); the message says why, with counts.",
      g_wvr_error, nullptr);
  if (g_wvr_nothing_usable == nullptr) throw py::error_already_set();
  m.add_object("WvrError", py::handle(g_wvr_error));
  m.add_object("WvrValueError", py::handle(g_wvr_value_error));
  m.add_object("WvrKeyError", py::handle(g_wvr_key_error));
  m.add_object("WvrNothingUsable", py::handle(g_wvr_nothing_usable));

  py::register_exception_translator([](std::exception_ptr error) {
    try {
      if (error) std::rethrow_exception(error);
    } catch (const InvalidInput& e) {
      PyErr_SetString(g_wvr_value_error, e.what());
    } catch (const NothingUsable& e) {
      PyErr_SetString(g_wvr_nothing_usable, e.what());
    } catch (const Error& e) {
      PyErr_SetString(g_wvr_error, e.what());
    } catch (const MissingKey& e) {
      PyErr_SetString(g_wvr_key_error, e.what());
    } catch (const py::builtin_exception&) {
      throw;  // pybind11's own (e.g. a bad argument type): its translator knows them
    } catch (const py::error_already_set&) {
      throw;
    } catch (const std::bad_alloc&) {
      throw;  // MemoryError
    } catch (const std::exception& e) {
      PyErr_SetString(g_wvr_error, e.what());
    }
  });
}

}  // namespace wvr::python
