// Private to the Python module: one registration function per area, all called
// from module.cpp.
#ifndef NMRPRED_PYTHON_REGISTER_HPP
#define NMRPRED_PYTHON_REGISTER_HPP

#include <pybind11/pybind11.h>

namespace nmrpred::python {

/// Maps nmrpred::Error subclasses to the classes in nmrpred._errors.
void register_errors(pybind11::module_ &m);
/// Record class and the predict_records() entry point.
void register_predict(pybind11::module_ &m);

}  // namespace nmrpred::python

#endif
