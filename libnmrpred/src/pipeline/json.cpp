// JSON output shared by the command-line program, the C ABI and Python.
//
// Each top-level key of a record is built by its own section function, so a
// later stage adds one function and one line in record_value() without
// touching the others. ordered_json keeps keys in the
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

/// Nucleus an atom's shift belongs to: 1H for hydrogen, 13C for carbon.
/// Other elements have none yet; returns false for them.
bool nucleus_of(const Atom &a, Nucleus &out) {
  if (a.atomic_number == 6) {
    out = Nucleus::C13;
    return true;
  }
  if (a.atomic_number == 1) {
    out = Nucleus::H1;
    return true;
  }
  return false;
}

/// Label of a nucleus in "signals" (isotope notation, as spectra are labelled).
const char *nucleus_label(Nucleus n) { return n == Nucleus::C13 ? "13C" : "1H"; }

void add_shift(Json &atom, const Shift &s) {
  atom["shift"] = s.ppm;
  atom["shift_uncertainty"] = s.uncertainty_ppm;
  atom["shift_method"] = s.method.str();
  atom["shift_references"] = s.references.to_vector();
  if (s.nucleus == Nucleus::H1) {
    atom["exchangeable"] = s.exchangeable;
    atom["observed"] = s.observed;
  }
}

Json atoms_section(const Prediction &p) {
  const Molecule &m = p.molecule;
  Json atoms = Json::array();
  for (std::size_t i = 0; i < m.atom_count(); ++i) {
    const Atom &a = m.atom(i);
    Nucleus nucleus{};
    const Shift *shift = nucleus_of(a, nucleus) ? p.shift(i, nucleus) : nullptr;
    Json atom;
    atom["index"] = i;
    atom["element"] = Molecule::element_symbol(a.atomic_number);
    atom["isotope"] = a.isotope == 0 ? Json(nullptr) : Json(a.isotope);
    atom["charge"] = static_cast<int>(a.formal_charge);
    atom["attached_to"] = nullable(attached_heavy_atom(m, i));
    atom["class"] = p.classes.chemical.at(i);
    atom["topological_class"] = p.classes.topological.at(i);
    atom["hose"] = p.hose.at(i);
    if (shift) add_shift(atom, *shift);
    atoms.push_back(std::move(atom));
  }
  return atoms;
}

Json line_value(const SpectralLine &l) {
  Json j;
  j["ppm"] = l.ppm;
  j["hz"] = l.hz;
  j["intensity"] = l.intensity;
  return j;
}

Json lines_value(const std::vector<SpectralLine> &lines) {
  Json out = Json::array();
  for (const auto &l : lines) out.push_back(line_value(l));
  return out;
}

/// Multiplet keys exist only when couplings were predicted, so that their
/// absence means "not computed" and an empty 13C multiplicity means "not split".
Json signal_value(const Signal &g, bool coupled) {
  Json j;
  j["shift"] = g.ppm;
  j["atoms"] = g.atoms;
  if (g.nucleus == Nucleus::C13) {
    j["attached_h"] = g.attached_h;
  } else {
    j["count"] = g.count;
  }
  j["shift_uncertainty"] = g.uncertainty_ppm;
  if (g.nucleus == Nucleus::H1) {
    j["exchangeable"] = g.exchangeable;
    j["observed"] = g.observed;
  }
  j["shift_method"] = g.method.str();
  if (coupled) {
    j["multiplicity"] = g.multiplicity;
    j["j_hz"] = g.j_hz;
    if (g.nucleus == Nucleus::H1) j["lines"] = lines_value(g.lines);
  }
  return j;
}

bool couplings_predicted(const Prediction &p) { return p.options.predict_shifts && p.options.predict_couplings; }

Json multiplet_value(const Multiplet &m) {
  Json j;
  j["ppm"] = m.ppm;
  j["ppm_low"] = m.ppm_low;
  j["ppm_high"] = m.ppm_high;
  j["label"] = m.label;
  j["j_hz"] = m.j_hz;
  j["integral"] = m.integral;
  j["atoms"] = m.atoms;
  j["lines"] = lines_value(m.lines);
  return j;
}

Json simulation_value(const Simulation &sim) {
  Json j;
  j["observe"] = spin_nucleus_name(sim.observed);
  j["mhz"] = sim.field_mhz;
  j["observe_mhz"] = sim.observed_mhz;
  j["lines"] = lines_value(sim.lines);
  Json multiplets = Json::array();
  for (const auto &m : sim.multiplets) multiplets.push_back(multiplet_value(m));
  j["multiplets"] = std::move(multiplets);
  j["warnings"] = sim.warnings;
  return j;
}

Json signal_list(const std::vector<Signal> &signals, bool coupled) {
  Json list = Json::array();
  for (const auto &g : signals) list.push_back(signal_value(g, coupled));
  return list;
}

Json signals_section(const Prediction &p) {
  // A nucleus appears only when it was predicted, so an empty list means "no
  // atoms of that nucleus", never "not computed".
  Json signals = Json::object();
  if (!p.options.predict_shifts) return signals;
  const bool coupled = couplings_predicted(p);
  signals[nucleus_label(Nucleus::C13)] = signal_list(p.c13_signals, coupled);
  if (p.options.predict_h1) {
    signals[nucleus_label(Nucleus::H1)] = signal_list(p.h1_signals, coupled);
    signals["1H_exchanged"] = signal_list(p.h1_exchanged_signals, coupled);
  }
  return signals;
}

std::vector<double> shifts_of(const std::vector<SolventSignal> &list) {
  std::vector<double> out;
  out.reserve(list.size());
  for (const auto &s : list) out.push_back(s.shift_ppm);
  return out;
}

/// The keys a record and the solvent table share.
Json solvent_summary(const Solvent &s) {
  Json j;
  j["id"] = s.id;
  j["name"] = s.name;
  j["residual_1h"] = shifts_of(s.h1_residual);
  j["residual_13c"] = shifts_of(s.c13);
  j["water_1h"] = s.water_h1_ppm;
  return j;
}

Json solvent_detail(const std::vector<SolventSignal> &list) {
  Json out = Json::array();
  for (const auto &s : list) {
    Json j;
    j["shift"] = s.shift_ppm;
    j["multiplicity"] = s.multiplicity;
    j["coupling_hz"] = s.coupling_hz > 0 ? Json(s.coupling_hz) : Json(nullptr);
    out.push_back(std::move(j));
  }
  return out;
}

Json solvent_value(const Solvent &s) {
  Json j = solvent_summary(s);
  j["aliases"] = s.aliases;
  j["exchanges_labile_protons"] = s.exchanges_labile_protons;
  j["source"] = s.source;
  j["residual_1h_detail"] = solvent_detail(s.h1_residual);
  j["residual_13c_detail"] = solvent_detail(s.c13);
  return j;
}

Json couplings_section(const Prediction &p) {
  Json out = Json::array();
  for (const auto &c : p.couplings) {
    Json j;
    j["atoms"] = {c.a, c.b};
    j["bonds"] = c.bonds;
    j["j_hz"] = c.j_hz;
    j["uncertainty_hz"] = c.uncertainty_hz;
    j["rule"] = c.rule;
    j["source"] = c.source;
    out.push_back(std::move(j));
  }
  return out;
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
  j["tables_version"] = p.tables_version;
  j["atoms"] = atoms_section(p);
  j["signals"] = signals_section(p);
  j["solvent"] = solvent_summary(p.solvent);
  j["warnings"] = p.warnings;
  j["counts"] = counts_section(p);
  if (couplings_predicted(p)) {
    j["field_mhz"] = p.options.field_mhz;
    j["line_width_hz"] = p.options.line_width_hz;
    j["couplings"] = couplings_section(p);
  }
  return j;
}

Json assignments_value(const std::vector<ReferenceAssignment> &list) {
  Json out = Json::array();
  for (const auto &a : list) {
    Json j;
    j["atoms"] = a.atoms;
    j["ppm"] = a.values;
    out.push_back(std::move(j));
  }
  return out;
}

Json reference_value(const ReferenceCompound &c) {
  Json j;
  j["id"] = c.id;
  j["smiles"] = c.smiles;
  j["solvent"] = c.solvent;
  j["source"] = c.source;
  j["file"] = c.file;
  j["user"] = c.user;
  j["c13"] = assignments_value(c.c13);
  j["h1"] = assignments_value(c.h1);
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

std::string to_json(const Solvent &solvent, const JsonOptions &options) {
  return dump(solvent_value(solvent), options);
}

std::string to_json(const ReferenceCompound &compound, const JsonOptions &options) {
  return dump(reference_value(compound), options);
}

std::string to_json(const Simulation &simulation, const JsonOptions &options) {
  return dump(simulation_value(simulation), options);
}

std::string to_json(const std::vector<RecordPrediction> &records, const JsonOptions &options) {
  Json all = Json::array();
  for (const auto &r : records) all.push_back(record_value(r));
  return dump(all, options);
}

}  // namespace nmrpred
