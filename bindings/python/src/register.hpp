// Private to the Python module: one registration function per area, all called
// from module.cpp.
#ifndef NMRPRED_PYTHON_REGISTER_HPP
#define NMRPRED_PYTHON_REGISTER_HPP

#include <string>
#include <vector>

#include <pybind11/pybind11.h>

#include <nmrpred/predict.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred::python {

/// Maps nmrpred::Error subclasses to the classes in nmrpred._errors.
void register_errors(pybind11::module_ &m);
/// Record class and the predict_records() entry point.
void register_predict(pybind11::module_ &m);
/// Spectrum class, simulate_json() and simulate_record().
void register_simulation(pybind11::module_ &m);
/// parse_measured(), format_measured(), measured_solvents().
void register_match(pybind11::module_ &m);

/// Ranks the successful `records` against the peak lists in `measured_texts`
/// and returns the JSON of nmr_match_to_json() (nmrpred.h). Throws
/// ArgumentError / InputError for unusable measured data.
std::string match_json(const std::vector<RecordPrediction> &records, const std::vector<std::string> &measured_texts,
                       const Tables &tables);

}  // namespace nmrpred::python

#endif
