#include <chrono>
#include <cmath>
#include <cstdint>
#include <limits>
#include <memory>
#include <mutex>
#include <optional>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <nmrpred/predict.hpp>
#include <nmrpred/solvents.hpp>

#include "register.hpp"

namespace py = pybind11;

namespace nmrpred::python {

namespace {

using Int64Array = py::array_t<std::int64_t>;
using Float64Array = py::array_t<double>;

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

/// The predicted shift of atom i, or null. Each element has one predicted
/// nucleus (C: 13C, H: 1H), so the atom decides which.
const Shift *shift_of(const Prediction &p, std::size_t i) {
  switch (p.molecule.atoms()[i].atomic_number) {
    case 6: return p.shift(i, Nucleus::C13);
    case 1: return p.shift(i, Nucleus::H1);
    default: return nullptr;
  }
}

/// One float64 value per atom of the atom's shift, NaN where it has none.
template <class F>
Float64Array per_atom_shift(const RecordPrediction &r, F &&value) {
  const std::size_t n = r.prediction ? r.prediction->molecule.atom_count() : 0;
  Float64Array out(static_cast<py::ssize_t>(n));
  auto w = out.mutable_unchecked<1>();
  for (std::size_t i = 0; i < n; ++i) {
    const Shift *s = shift_of(*r.prediction, i);
    w(static_cast<py::ssize_t>(i)) = s ? value(*s) : std::numeric_limits<double>::quiet_NaN();
  }
  return out;
}

/// One bool per atom of the atom's 1H shift, `otherwise` where it has none.
template <class F>
py::array_t<bool> per_atom_flag(const RecordPrediction &r, bool otherwise, F &&value) {
  const std::size_t n = r.prediction ? r.prediction->molecule.atom_count() : 0;
  py::array_t<bool> out(static_cast<py::ssize_t>(n));
  auto w = out.mutable_unchecked<1>();
  for (std::size_t i = 0; i < n; ++i) {
    const Shift *s = shift_of(*r.prediction, i);
    w(static_cast<py::ssize_t>(i)) = s && s->nucleus == Nucleus::H1 ? value(*s) : otherwise;
  }
  return out;
}

/// A list of signals with the keys of the JSON (nmrpred/predict.hpp, to_json).
py::list signal_list(const std::vector<Signal> &signals, bool with_couplings) {
  py::list list;
  for (const Signal &g : signals) {
    py::dict d;
    d["shift"] = g.ppm;
    d["atoms"] = py::cast(std::vector<std::int64_t>(g.atoms.begin(), g.atoms.end()));
    if (g.nucleus == Nucleus::C13)
      d["attached_h"] = g.attached_h;
    else
      d["count"] = g.count;
    d["shift_uncertainty"] = g.uncertainty_ppm;
    if (g.nucleus == Nucleus::H1) {
      d["exchangeable"] = g.exchangeable;
      d["observed"] = g.observed;
    }
    d["shift_method"] = g.method.str();
    if (with_couplings) {
      // The keys the JSON adds when couplings were predicted.
      d["multiplicity"] = g.multiplicity;
      d["j_hz"] = g.j_hz;
      if (g.nucleus == Nucleus::H1) {
        py::list lines;
        for (const SpectralLine &l : g.lines) {
          py::dict ld;
          ld["ppm"] = l.ppm;
          ld["hz"] = l.hz;
          ld["intensity"] = l.intensity;
          lines.append(std::move(ld));
        }
        d["lines"] = std::move(lines);
      }
    }
    list.append(std::move(d));
  }
  return list;
}

/// {"13C": [...], "1H": [...], "1H_exchanged": [...]} as in the JSON; a
/// nucleus appears only when it was predicted.
py::dict signals_of(const RecordPrediction &r) {
  py::dict out;
  if (!r.prediction || !r.prediction->options.predict_shifts) return out;
  const Prediction &p = *r.prediction;
  const bool couplings = p.options.predict_couplings;
  out["13C"] = signal_list(p.c13_signals, couplings);
  if (p.options.predict_h1) {
    out["1H"] = signal_list(p.h1_signals, couplings);
    out["1H_exchanged"] = signal_list(p.h1_exchanged_signals, couplings);
  }
  return out;
}

std::vector<double> shifts_of(const std::vector<SolventSignal> &list) {
  std::vector<double> out;
  for (const auto &s : list) out.push_back(s.shift_ppm);
  return out;
}

/// The record's "solvent" object of the JSON, as a dict (None for a failed record).
py::object solvent_of(const RecordPrediction &r) {
  if (!r.prediction) return py::none();
  const Solvent &s = r.prediction->solvent;
  py::dict d;
  d["id"] = s.id;
  d["name"] = s.name;
  d["residual_1h"] = shifts_of(s.h1_residual);
  d["residual_13c"] = shifts_of(s.c13);
  d["water_1h"] = s.water_h1_ppm;
  return std::move(d);
}

std::int64_t attached_heavy_atom(const Molecule &m, std::size_t i) {
  const std::int64_t a = m.attached_to(i);
  return (a < 0 || m.is_hydrogen(static_cast<std::size_t>(a))) ? -1 : a;
}

/// The tables and settings of a Python nmrpred.Context. The work runs without
/// the GIL, so the tables pointer is guarded by the context's own mutex: a
/// prediction takes a reference to the current (immutable) tables and runs
/// outside the lock; add_reference swaps in a new set.
/// Lock order: release the GIL first, then take the mutex, never the reverse.
class PyContext {
 public:
  explicit PyContext(const std::optional<std::string> &tables_dir) {
    py::gil_scoped_release release;
    tables_ = tables_dir ? Tables::load(*tables_dir) : Tables::builtin();
  }

  std::shared_ptr<const Tables> tables() const {
    std::lock_guard<std::mutex> lock(mutex_);
    return tables_;
  }

  std::string tables_version() const {
    py::gil_scoped_release release;
    return tables()->version();
  }

  void add_reference(const std::string &text, const std::string &name) {
    py::gil_scoped_release release;
    // Held for the whole rebuild, so two additions cannot lose one another.
    std::lock_guard<std::mutex> lock(mutex_);
    tables_ = tables_->with_user_reference(text, name);
  }

  std::vector<std::string> reference_json() const {
    const auto t = [&] {
      py::gil_scoped_release release;
      return tables();
    }();
    std::vector<std::string> out;
    out.reserve(t->reference().size());
    for (const auto &c : t->reference()) out.push_back(to_json(c));
    return out;
  }

  std::vector<std::string> solvents_json() const {
    py::gil_scoped_release release;
    std::vector<std::string> out;
    for (const auto &s : solvents(*tables())) out.push_back(to_json(s));
    return out;
  }

  std::vector<RecordPrediction> predict_records(const std::string &text, const std::string &format_name,
                                                int spheres, bool blind, bool predict_shifts,
                                                const std::string &solvent, bool predict_h1, bool predict_couplings,
                                                double field_mhz, double line_width_hz) const;

  std::string match(const std::vector<RecordPrediction> &records,
                    const std::vector<std::string> &measured_texts) const {
    py::gil_scoped_release release;
    return match_json(records, measured_texts, *tables());
  }

 private:
  mutable std::mutex mutex_;
  std::shared_ptr<const Tables> tables_;
};

std::vector<RecordPrediction> PyContext::predict_records(const std::string &text, const std::string &format_name,
                                                         int spheres, bool blind, bool predict_shifts,
                                                         const std::string &solvent, bool predict_h1,
                                                         bool predict_couplings, double field_mhz,
                                                         double line_width_hz) const {
  PredictOptions options;
  options.predict_couplings = predict_couplings;
  options.field_mhz = field_mhz;
  options.line_width_hz = line_width_hz;
  options.hose_spheres = spheres;
  options.blind = blind;
  options.predict_shifts = predict_shifts;
  options.solvent = solvent;
  options.predict_h1 = predict_h1;
  validate(options);
  const Format format = parse_format(format_name);

  std::vector<RecordPrediction> out;
  std::istringstream in(text);
  py::gil_scoped_release release;
  const std::shared_ptr<const Tables> t = tables();
  // The solvent needs the tables; checking it before the first record makes
  // a typo one ArgumentError, not a failure per record.
  validate(options, *t);
  MoleculeReader reader(in, format);
  ReadRecord r;
  auto last_check = std::chrono::steady_clock::now();
  while (reader.next(r)) {
    out.push_back(predict_record(std::move(r), *t, options));
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
      .def_property_readonly("tables_version",
                             [](const RecordPrediction &r) {
                               return r.prediction ? r.prediction->tables_version : std::string();
                             })
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
      .def("shifts", [](const RecordPrediction &r) { return per_atom_shift(r, [](const Shift &s) { return s.ppm; }); })
      .def("shift_uncertainties",
           [](const RecordPrediction &r) {
             return per_atom_shift(r, [](const Shift &s) { return s.uncertainty_ppm; });
           })
      .def("shift_methods",
           [](const RecordPrediction &r) {
             std::vector<std::optional<std::string>> out;
             if (r.prediction)
               for (std::size_t i = 0; i < r.prediction->molecule.atom_count(); ++i) {
                 const Shift *s = shift_of(*r.prediction, i);
                 out.push_back(s ? std::optional<std::string>(s->method.str()) : std::nullopt);
               }
             return out;
           })
      .def("shift_references",
           [](const RecordPrediction &r) {
             std::vector<std::vector<std::string>> out;
             if (r.prediction)
               for (std::size_t i = 0; i < r.prediction->molecule.atom_count(); ++i) {
                 const Shift *s = shift_of(*r.prediction, i);
                 out.push_back(s ? s->references.to_vector() : std::vector<std::string>{});
               }
             return out;
           })
      .def("signals", &signals_of)
      .def("exchangeable",
           [](const RecordPrediction &r) { return per_atom_flag(r, false, [](const Shift &s) { return s.exchangeable; }); })
      .def("observed",
           [](const RecordPrediction &r) { return per_atom_flag(r, true, [](const Shift &s) { return s.observed; }); })
      .def("solvent", &solvent_of)
      .def("couplings",
           [](const RecordPrediction &r) {
             py::list out;
             if (r.prediction)
               for (const Coupling &c : r.prediction->couplings) {
                 py::dict d;
                 // The keys of the record JSON's "couplings".
                 py::list atoms;
                 atoms.append(c.a);
                 atoms.append(c.b);
                 d["atoms"] = std::move(atoms);
                 d["bonds"] = c.bonds;
                 d["j_hz"] = c.j_hz;
                 d["uncertainty_hz"] = c.uncertainty_hz;
                 d["rule"] = c.rule;
                 d["source"] = c.source;
                 out.append(std::move(d));
               }
             return out;
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

  py::class_<PyContext>(m, "Context", "Tables and their lock (private; see nmrpred.Context).")
      .def(py::init<const std::optional<std::string> &>(), py::arg("tables_dir"))
      .def_property_readonly("tables_version", &PyContext::tables_version)
      .def("add_reference", &PyContext::add_reference, py::arg("text"), py::arg("name"))
      .def("reference_json", &PyContext::reference_json)
      .def("solvents_json", &PyContext::solvents_json)
      .def("predict_records", &PyContext::predict_records, py::arg("text"), py::arg("format"), py::arg("spheres"),
           py::arg("blind"), py::arg("predict_shifts"), py::arg("solvent"), py::arg("predict_h1"),
           py::arg("predict_couplings") = true, py::arg("field_mhz") = 400.0, py::arg("line_width_hz") = 1.0,
           "Reads and predicts every record of text; the GIL is released while it works.")
      .def("match", &PyContext::match, py::arg("records"), py::arg("measured_texts"),
           "Ranks the records against measured peak lists; JSON as nmr_match_to_json().");
  m.def("max_hose_spheres", [] { return kMaxHoseSpheres; });
  m.def("default_hose_spheres", [] { return kDefaultHoseSpheres; });
}

}  // namespace nmrpred::python
