// JSON output shared by the command-line program, the C ABI and Python.
//
// Each top-level key of a record is built by its own section function, so a
// later stage (shifts, signals) adds one function and one line in
// record_value() without touching the others. ordered_json keeps keys in the
// order they are written, which keeps the output readable and diff-friendly.

#include <nmrpred/predict.hpp>

#include <nlohmann/json.hpp>

namespace nmrpred {

namespace {

using Json = nlohmann::ordered_json;

Json nullable(std::int64_t v) { return v < 0 ? Json(nullptr) : Json(v); }

/// Heavy atom a hydrogen is bonded to, or -1. A hydrogen bonded only to another
/// hydrogen (H2) has no heavy atom.
std::int64_t attached_heavy_atom(const Molecule &m, std::size_t i) {
  const std::int64_t a = m.attached_to(i);
  if (a < 0 || m.is_hydrogen(static_cast<std::size_t>(a))) return -1;
  return a;
}

Json atoms_section(const Prediction &p) {
  const Molecule &m = p.molecule;
  Json atoms = Json::array();
  for (std::size_t i = 0; i < m.atom_count(); ++i) {
    const Atom &a = m.atom(i);
    Json atom;
    atom["index"] = i;
    atom["element"] = Molecule::element_symbol(a.atomic_number);
    atom["isotope"] = a.isotope == 0 ? Json(nullptr) : Json(a.isotope);
    atom["charge"] = static_cast<int>(a.formal_charge);
    atom["attached_to"] = nullable(attached_heavy_atom(m, i));
    atom["class"] = p.classes.chemical.at(i);
    atom["topological_class"] = p.classes.topological.at(i);
    atom["hose"] = p.hose.at(i);
    atoms.push_back(std::move(atom));
  }
  return atoms;
}

Json counts_section(const Prediction &p) {
  Json counts;
  counts["atoms"] = p.molecule.atom_count();
  counts["heavy_atoms"] = p.molecule.heavy_atom_count();
  counts["classes"] = p.classes.chemical_count;
  counts["topological_classes"] = p.classes.topological_count;
  return counts;
}

Json error_section(const RecordPrediction &r) {
  Json e;
  e["code"] = static_cast<int>(r.status);
  e["name"] = status_constant_name(r.status);
  e["message"] = r.error;
  return e;
}

Json record_value(const RecordPrediction &r) {
  Json j;
  j["record"] = r.record;
  if (!r.ok() || !r.prediction) {
    j["error"] = error_section(r);
    return j;
  }
  const Prediction &p = *r.prediction;
  j["title"] = r.title;
  j["atoms"] = atoms_section(p);
  j["warnings"] = p.warnings;
  j["counts"] = counts_section(p);
  return j;
}

std::string dump(const Json &j, const JsonOptions &options) {
  // Titles come straight from files and may hold Latin-1 bytes; replacing them
  // beats failing the whole record over a name.
  return j.dump(options.indent < 0 ? -1 : options.indent, ' ', false, Json::error_handler_t::replace);
}

}  // namespace

const char *status_constant_name(Status status) noexcept {
  switch (status) {
    case Status::Ok: return "NMR_OK";
    case Status::Argument: return "NMR_ERR_ARGUMENT";
    case Status::Input: return "NMR_ERR_INPUT";
    case Status::Unsupported: return "NMR_ERR_UNSUPPORTED";
    case Status::Tables: return "NMR_ERR_TABLES";
    case Status::NoMemory: return "NMR_ERR_NOMEM";
    case Status::Internal: return "NMR_ERR_INTERNAL";
  }
  return "NMR_ERR_UNKNOWN";
}

std::string to_json(const RecordPrediction &record, const JsonOptions &options) {
  return dump(record_value(record), options);
}

std::string to_json(const std::vector<RecordPrediction> &records, const JsonOptions &options) {
  Json all = Json::array();
  for (const auto &r : records) all.push_back(record_value(r));
  return dump(all, options);
}

}  // namespace nmrpred
