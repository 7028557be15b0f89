#include <new>

#include <pybind11/pybind11.h>

#include <nmrpred/error.hpp>

#include "register.hpp"

namespace py = pybind11;

namespace nmrpred::python {

namespace {

const char *class_name(Status status) noexcept {
  switch (status) {
    case Status::Argument: return "ArgumentError";
    case Status::Input: return "InputError";
    case Status::Unsupported: return "UnsupportedError";
    case Status::Tables: return "TablesError";
    case Status::Internal: return "InternalError";
    case Status::Ok:
    case Status::NoMemory: break;
  }
  return "InternalError";
}

}  // namespace

void register_errors(py::module_ &) {
  // The exception classes are plain Python (nmrpred/_errors.py) because an
  // input error must derive from both nmrpred.Error and ValueError, which
  // pybind11's register_exception cannot express.
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const Error &e) {
      if (e.status() == Status::NoMemory) {
        PyErr_SetString(PyExc_MemoryError, e.what());
        return;
      }
      try {
        py::object cls = py::module_::import("nmrpred._errors").attr(class_name(e.status()));
        PyErr_SetString(cls.ptr(), e.what());
      } catch (py::error_already_set &) {
        // Without the package (a broken install) the message must still reach
        // the caller.
        PyErr_Clear();
        PyErr_SetString(PyExc_RuntimeError, e.what());
      }
    }
  });
}

}  // namespace nmrpred::python
