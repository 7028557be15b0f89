// nmrpred._core: private extension module. The typed public API is the Python
// package nmrpred (bindings/python/nmrpred/__init__.py).
#include <pybind11/pybind11.h>

#include <nmrpred/version.hpp>

#include "register.hpp"

PYBIND11_MODULE(_core, m) {
  m.doc() = "Private extension of the nmrpred package; use the nmrpred module instead.";
  nmrpred::python::register_errors(m);
  nmrpred::python::register_predict(m);
  nmrpred::python::register_simulation(m);
  nmrpred::python::register_match(m);
  m.attr("__version__") = nmrpred::version_string();
}
