#include <chrono>
#include <cstdint>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <nmrpred/predict.hpp>

#include "register.hpp"

namespace py = pybind11;

namespace nmrpred::python {

namespace {

using Int64Array = py::array_t<std::int64_t>;

/// How often a running batch looks for Ctrl-C: short enough to feel immediate.
constexpr std::chrono::milliseconds kSignalCheckInterval{100};

/// Copies one int64 value per atom into a new NumPy array (results are small,
/// and a copy cannot dangle).
template <class F>
Int64Array per_atom(const RecordPrediction &r, F &&value) {
  const std::size_t n = r.prediction ? r.prediction->molecule.atom_count() : 0;
  Int64Array out(static_cast<py::ssize_t>(n));
  auto w = out.mutable_unchecked<1>();
  for (std::size_t i = 0; i < n; ++i) w(static_cast<py::ssize_t>(i)) = value(*r.prediction, i);
  return out;
}

std::int64_t attached_heavy_atom(const Molecule &m, std::size_t i) {
  const std::int64_t a = m.attached_to(i);
  return (a < 0 || m.is_hydrogen(static_cast<std::size_t>(a))) ? -1 : a;
}

std::vector<RecordPrediction> predict_records(const std::string &text, const std::string &format_name,
                                              int spheres) {
  PredictOptions options;
  options.hose_spheres = spheres;
  validate(options);
  const Format format = parse_format(format_name);

  std::vector<RecordPrediction> out;
  std::istringstream in(text);
  py::gil_scoped_release release;
  MoleculeReader reader(in, format);
  ReadRecord r;
  auto last_check = std::chrono::steady_clock::now();
  while (reader.next(r)) {
    out.push_back(predict_record(std::move(r), options));
    r = ReadRecord{};
    // Let Ctrl-C stop a long batch between records. Taking the GIL per record
    // would make the batch wait on other Python threads, so look only every
    // kSignalCheckInterval.
    const auto now = std::chrono::steady_clock::now();
    if (now - last_check >= kSignalCheckInterval) {
      last_check = now;
      py::gil_scoped_acquire acquire;
      if (PyErr_CheckSignals() != 0) throw py::error_already_set();
    }
  }
  return out;
}

}  // namespace

void register_predict(py::module_ &m) {
  py::class_<RecordPrediction>(m, "Record", "One record of a batch (private; see nmrpred.Prediction).")
      .def_property_readonly("record", [](const RecordPrediction &r) { return r.record; })
      .def_property_readonly("title", [](const RecordPrediction &r) { return r.title; })
      .def_property_readonly("ok", &RecordPrediction::ok)
      .def_property_readonly("status", [](const RecordPrediction &r) { return static_cast<int>(r.status); })
      .def_property_readonly("status_name",
                             [](const RecordPrediction &r) { return std::string(status_constant_name(r.status)); })
      .def_property_readonly("error", [](const RecordPrediction &r) { return r.error; })
      .def_property_readonly("warnings", [](const RecordPrediction &r) { return r.warnings(); })
      .def_property_readonly("atom_count",
                             [](const RecordPrediction &r) -> std::size_t {
                               return r.prediction ? r.prediction->molecule.atom_count() : 0;
                             })
      .def_property_readonly("heavy_atom_count",
                             [](const RecordPrediction &r) -> std::size_t {
                               return r.prediction ? r.prediction->molecule.heavy_atom_count() : 0;
                             })
      .def_property_readonly("class_count",
                             [](const RecordPrediction &r) -> std::size_t {
                               return r.prediction ? r.prediction->classes.chemical_count : 0;
                             })
      .def_property_readonly("topological_class_count",
                             [](const RecordPrediction &r) -> std::size_t {
                               return r.prediction ? r.prediction->classes.topological_count : 0;
                             })
      .def("atomic_numbers",
           [](const RecordPrediction &r) {
             return per_atom(r, [](const Prediction &p, std::size_t i) -> std::int64_t {
               return p.molecule.atoms()[i].atomic_number;
             });
           })
      .def("isotopes",
           [](const RecordPrediction &r) {
             return per_atom(r, [](const Prediction &p, std::size_t i) -> std::int64_t {
               return p.molecule.atoms()[i].isotope;
             });
           })
      .def("charges",
           [](const RecordPrediction &r) {
             return per_atom(r, [](const Prediction &p, std::size_t i) -> std::int64_t {
               return p.molecule.atoms()[i].formal_charge;
             });
           })
      .def("attached_to",
           [](const RecordPrediction &r) {
             return per_atom(r, [](const Prediction &p, std::size_t i) { return attached_heavy_atom(p.molecule, i); });
           })
      .def("classes",
           [](const RecordPrediction &r) {
             return per_atom(r, [](const Prediction &p, std::size_t i) -> std::int64_t {
               return p.classes.chemical.at(i);
             });
           })
      .def("topological_classes",
           [](const RecordPrediction &r) {
             return per_atom(r, [](const Prediction &p, std::size_t i) -> std::int64_t {
               return p.classes.topological.at(i);
             });
           })
      .def("hose",
           [](const RecordPrediction &r) {
             return r.prediction ? r.prediction->hose : std::vector<std::string>{};
           })
      .def("elements",
           [](const RecordPrediction &r) {
             std::vector<std::string> out;
             if (r.prediction)
               for (const auto &a : r.prediction->molecule.atoms())
                 out.emplace_back(Molecule::element_symbol(a.atomic_number));
             return out;
           })
      .def(
          "to_json",
          [](const RecordPrediction &r, int indent) {
            JsonOptions o;
            o.indent = indent;
            return to_json(r, o);
          },
          py::arg("indent") = -1);

  m.def("predict_records", &predict_records, py::arg("text"), py::arg("format"), py::arg("spheres"),
        "Reads and predicts every record of text; the GIL is released while it works.");
  m.def("max_hose_spheres", [] { return kMaxHoseSpheres; });
  m.def("default_hose_spheres", [] { return kDefaultHoseSpheres; });
}

}  // namespace nmrpred::python
