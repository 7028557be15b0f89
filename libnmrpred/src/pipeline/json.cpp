// JSON output shared by the command-line program, the C ABI and Python.
//
// Each top-level key of a record is written by its own section function, so
// a later stage adds one function and one line in write_record() without
// touching the others. Keys come out in the order they are written, which
// keeps the output readable and diff-friendly.
//
// The text is written straight into one string rather than built as a JSON
// document first: over the NCI records the document's nodes (an allocation
// per key and value) and its serialisation cost about twice the prediction
// itself. Numbers and non-ASCII strings are still formatted by nlohmann's
// own routines, so the bytes are those its serialiser writes (compact,
// shortest round-trip doubles, null for non-finite ones, invalid UTF-8
// replaced); indented output is that text parsed and dumped again.

#include <nmrpred/predict.hpp>

#include <array>
#include <charconv>
#include <cmath>
#include <optional>
#include <string>
#include <string_view>
#include <type_traits>
#include <vector>

#include <nlohmann/json.hpp>

namespace nmrpred {

namespace {

using Json = nlohmann::ordered_json;

// Compact JSON text written value by value. A value written after another
// in the same array or object gets its comma; keys are followed by their
// value. The caller keeps the nesting right.
class Writer {
 public:
  std::string take() { return std::move(out_); }

  Writer &begin_object() { return open('{'); }
  Writer &end_object() { return close('}'); }
  Writer &begin_array() { return open('['); }
  Writer &end_array() { return close(']'); }
  Writer &key(std::string_view k) {
    separate();
    put_string(k);
    out_ += ':';
    after_value_ = false;
    return *this;
  }

  Writer &value(std::nullptr_t) { return raw("null"); }
  Writer &value(bool b) { return raw(b ? "true" : "false"); }
  Writer &value(double x) {
    separate();
    if (!std::isfinite(x)) {
      out_ += "null";
    } else {
      // nlohmann's serialiser writes doubles with this routine.
      std::array<char, 64> buf;
      const char *end = nlohmann::detail::to_chars(buf.data(), buf.data() + buf.size(), x);
      out_.append(buf.data(), static_cast<std::size_t>(end - buf.data()));
    }
    after_value_ = true;
    return *this;
  }
  template <class T, std::enable_if_t<std::is_integral_v<T> && !std::is_same_v<T, bool>, int> = 0>
  Writer &value(T v) {
    separate();
    std::array<char, 24> buf;
    const auto r = std::to_chars(buf.data(), buf.data() + buf.size(), v);
    out_.append(buf.data(), static_cast<std::size_t>(r.ptr - buf.data()));
    after_value_ = true;
    return *this;
  }
  Writer &value(std::string_view s) {
    separate();
    put_string(s);
    after_value_ = true;
    return *this;
  }
  Writer &value(const std::string &s) { return value(std::string_view(s)); }
  Writer &value(const char *s) { return value(std::string_view(s)); }
  // A value or null.
  template <class T>
  Writer &value(const std::optional<T> &v) {
    return v ? value(*v) : value(nullptr);
  }
  template <class T>
  Writer &value(const std::vector<T> &list) {
    return array(list, [](Writer &w, const T &x) { w.value(x); });
  }
  Writer &value(const ReferenceIds &ids) {
    return array(ids, [](Writer &w, std::string_view id) { w.value(id); });
  }
  // `list` as an array, each element written by write(*this, element).
  template <class List, class Write>
  Writer &array(const List &list, Write &&write) {
    begin_array();
    for (const auto &x : list) write(*this, x);
    return end_array();
  }
  // A key and its value.
  template <class T>
  Writer &field(std::string_view k, const T &v) {
    key(k);
    return value(v);
  }

 private:
  Writer &open(char c) {
    separate();
    out_ += c;
    after_value_ = false;
    return *this;
  }
  Writer &close(char c) {
    out_ += c;
    after_value_ = true;
    return *this;
  }
  Writer &raw(std::string_view text) {
    separate();
    out_ += text;
    after_value_ = true;
    return *this;
  }
  void separate() {
    if (after_value_) out_ += ',';
  }
  // Printable ASCII is copied with '"' and '\\' escaped; control characters
  // and anything beyond ASCII take nlohmann's escaping, so the bytes match
  // its serialiser's. Titles come straight from files and may hold Latin-1
  // bytes: invalid UTF-8 is replaced, which beats failing the whole record
  // over a name.
  void put_string(std::string_view s) {
    for (const char c : s)
      if (static_cast<unsigned char>(c) < 0x20 || static_cast<unsigned char>(c) >= 0x7f) {
        out_ += Json(s).dump(-1, ' ', false, Json::error_handler_t::replace);
        return;
      }
    out_ += '"';
    for (const char c : s) {
      if (c == '"' || c == '\\') out_ += '\\';
      out_ += c;
    }
    out_ += '"';
  }

  std::string out_;
  bool after_value_ = false;
};

/// Heavy atom a hydrogen is bonded to, if any. A hydrogen bonded only to
/// another hydrogen (H2) has no heavy atom.
std::optional<std::int64_t> attached_heavy_atom(const Molecule &m, std::size_t i) {
  const std::int64_t a = m.attached_to(i);
  if (a < 0 || m.is_hydrogen(static_cast<std::size_t>(a))) return std::nullopt;
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

void write_shift(Writer &w, const Shift &s) {
  w.field("shift", s.ppm);
  w.field("shift_uncertainty", s.uncertainty_ppm);
  w.field("shift_method", s.method.view());
  w.field("shift_references", s.references);
  if (s.nucleus == Nucleus::H1) {
    w.field("exchangeable", s.exchangeable);
    w.field("observed", s.observed);
  }
}

void write_atoms(Writer &w, const Prediction &p) {
  const Molecule &m = p.molecule;
  w.begin_array();
  for (std::size_t i = 0; i < m.atom_count(); ++i) {
    const Atom &a = m.atom(i);
    Nucleus nucleus{};
    const Shift *shift = nucleus_of(a, nucleus) ? p.shift(i, nucleus) : nullptr;
    w.begin_object();
    w.field("index", i);
    w.field("element", Molecule::element_symbol(a.atomic_number));
    w.field("isotope", a.isotope == 0 ? std::nullopt : std::optional(a.isotope));
    w.field("charge", static_cast<int>(a.formal_charge));
    w.field("attached_to", attached_heavy_atom(m, i));
    w.field("class", p.classes.chemical.at(i));
    w.field("topological_class", p.classes.topological.at(i));
    w.field("hose", p.hose.at(i));
    if (shift) write_shift(w, *shift);
    w.end_object();
  }
  w.end_array();
}

void write_line(Writer &w, const SpectralLine &l) {
  w.begin_object().field("ppm", l.ppm).field("hz", l.hz).field("intensity", l.intensity).end_object();
}

/// Multiplet keys exist only when couplings were predicted, so that their
/// absence means "not computed" and an empty 13C multiplicity means "not split".
void write_signal(Writer &w, const Signal &g, bool coupled) {
  w.begin_object();
  w.field("shift", g.ppm);
  w.field("atoms", g.atoms);
  if (g.nucleus == Nucleus::C13)
    w.field("attached_h", g.attached_h);
  else
    w.field("count", g.count);
  w.field("shift_uncertainty", g.uncertainty_ppm);
  if (g.nucleus == Nucleus::H1) {
    w.field("exchangeable", g.exchangeable);
    w.field("observed", g.observed);
  }
  w.field("shift_method", g.method.view());
  if (coupled) {
    w.field("multiplicity", g.multiplicity);
    w.field("j_hz", g.j_hz);
    if (g.nucleus == Nucleus::H1) w.key("lines").array(g.lines, write_line);
  }
  w.end_object();
}

bool couplings_predicted(const Prediction &p) { return p.options.predict_shifts && p.options.predict_couplings; }

void write_multiplet(Writer &w, const Multiplet &m) {
  w.begin_object();
  w.field("ppm", m.ppm);
  w.field("ppm_low", m.ppm_low);
  w.field("ppm_high", m.ppm_high);
  w.field("label", m.label);
  w.field("j_hz", m.j_hz);
  w.field("integral", m.integral);
  w.field("atoms", m.atoms);
  w.key("lines").array(m.lines, write_line);
  w.end_object();
}

void write_simulation(Writer &w, const Simulation &sim) {
  w.begin_object();
  w.field("observe", spin_nucleus_name(sim.observed));
  w.field("mhz", sim.field_mhz);
  w.field("observe_mhz", sim.observed_mhz);
  w.key("lines").array(sim.lines, write_line);
  w.key("multiplets").array(sim.multiplets, write_multiplet);
  w.field("warnings", sim.warnings);
  w.end_object();
}

void write_signals(Writer &w, const Prediction &p) {
  // A nucleus appears only when it was predicted, so an empty list means "no
  // atoms of that nucleus", never "not computed".
  w.begin_object();
  if (p.options.predict_shifts) {
    const bool coupled = couplings_predicted(p);
    const auto signal = [coupled](Writer &w, const Signal &g) { write_signal(w, g, coupled); };
    w.key(nucleus_label(Nucleus::C13)).array(p.c13_signals, signal);
    if (p.options.predict_h1) {
      w.key(nucleus_label(Nucleus::H1)).array(p.h1_signals, signal);
      w.key("1H_exchanged").array(p.h1_exchanged_signals, signal);
    }
  }
  w.end_object();
}

void write_shift_of(Writer &w, const SolventSignal &s) { w.value(s.shift_ppm); }

/// The keys a record and the solvent table share, without the braces.
void write_solvent_summary(Writer &w, const Solvent &s) {
  w.field("id", s.id);
  w.field("name", s.name);
  w.key("residual_1h").array(s.h1_residual, write_shift_of);
  w.key("residual_13c").array(s.c13, write_shift_of);
  w.field("water_1h", s.water_h1_ppm);
}

void write_solvent_signal(Writer &w, const SolventSignal &s) {
  w.begin_object();
  w.field("shift", s.shift_ppm);
  w.field("multiplicity", s.multiplicity);
  w.field("coupling_hz", s.coupling_hz > 0 ? std::optional(s.coupling_hz) : std::nullopt);
  w.end_object();
}

void write_solvent(Writer &w, const Solvent &s) {
  w.begin_object();
  write_solvent_summary(w, s);
  w.field("aliases", s.aliases);
  w.field("exchanges_labile_protons", s.exchanges_labile_protons);
  w.field("source", s.source);
  w.key("residual_1h_detail").array(s.h1_residual, write_solvent_signal);
  w.key("residual_13c_detail").array(s.c13, write_solvent_signal);
  w.end_object();
}

void write_coupling(Writer &w, const Coupling &c) {
  w.begin_object();
  w.key("atoms").begin_array().value(c.a).value(c.b).end_array();
  w.field("bonds", c.bonds);
  w.field("j_hz", c.j_hz);
  w.field("uncertainty_hz", c.uncertainty_hz);
  w.field("rule", c.rule);
  w.field("source", c.source);
  w.end_object();
}

void write_counts(Writer &w, const Prediction &p) {
  w.begin_object();
  w.field("atoms", p.molecule.atom_count());
  w.field("heavy_atoms", p.molecule.heavy_atom_count());
  w.field("classes", p.classes.chemical_count);
  w.field("topological_classes", p.classes.topological_count);
  w.end_object();
}

void write_error(Writer &w, const RecordPrediction &r) {
  w.begin_object();
  w.field("code", static_cast<int>(r.status));
  w.field("name", status_constant_name(r.status));
  w.field("message", r.error);
  w.end_object();
}

void write_record(Writer &w, const RecordPrediction &r) {
  w.begin_object();
  w.field("record", r.record);
  if (!r.ok() || !r.prediction) {
    w.key("error");
    write_error(w, r);
    w.end_object();
    return;
  }
  const Prediction &p = *r.prediction;
  w.field("title", r.title);
  w.field("tables_version", p.tables_version);
  w.key("atoms");
  write_atoms(w, p);
  w.key("signals");
  write_signals(w, p);
  w.key("solvent").begin_object();
  write_solvent_summary(w, p.solvent);
  w.end_object();
  w.field("warnings", p.warnings);
  w.key("counts");
  write_counts(w, p);
  if (couplings_predicted(p)) {
    w.field("field_mhz", p.options.field_mhz);
    w.field("line_width_hz", p.options.line_width_hz);
    w.key("couplings").array(p.couplings, write_coupling);
  }
  w.end_object();
}

void write_assignment(Writer &w, const ReferenceAssignment &a) {
  w.begin_object().field("atoms", a.atoms).field("ppm", a.values).end_object();
}

void write_reference(Writer &w, const ReferenceCompound &c) {
  w.begin_object();
  w.field("id", c.id);
  w.field("smiles", c.smiles);
  w.field("solvent", c.solvent);
  w.field("source", c.source);
  w.field("file", c.file);
  w.field("user", c.user);
  w.key("c13").array(c.c13, write_assignment);
  w.key("h1").array(c.h1, write_assignment);
  w.end_object();
}

// What `write` wrote, indented if asked for.
template <class Write>
std::string finish(const JsonOptions &options, Write &&write) {
  Writer w;
  write(w);
  std::string text = w.take();
  if (options.indent < 0) return text;
  return Json::parse(text).dump(options.indent, ' ', false, Json::error_handler_t::replace);
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
  return finish(options, [&](Writer &w) { write_record(w, record); });
}

std::string to_json(const Solvent &solvent, const JsonOptions &options) {
  return finish(options, [&](Writer &w) { write_solvent(w, solvent); });
}

std::string to_json(const ReferenceCompound &compound, const JsonOptions &options) {
  return finish(options, [&](Writer &w) { write_reference(w, compound); });
}

std::string to_json(const Simulation &simulation, const JsonOptions &options) {
  return finish(options, [&](Writer &w) { write_simulation(w, simulation); });
}

std::string to_json(const std::vector<RecordPrediction> &records, const JsonOptions &options) {
  return finish(options, [&](Writer &w) { w.array(records, write_record); });
}

}  // namespace nmrpred
