#include <nmrpred/predict.hpp>

#include <algorithm>
#include <exception>
#include <map>
#include <new>
#include <utility>

#include <fmt/format.h>

namespace nmrpred {

void validate(const PredictOptions &options) {
  if (options.hose_spheres < 1 || options.hose_spheres > kMaxHoseSpheres)
    throw ArgumentError(fmt::format("hose_spheres must be between 1 and {}, got {}", kMaxHoseSpheres,
                                    options.hose_spheres));
}

Solvent validate(const PredictOptions &options, const Tables &tables) {
  validate(options);
  return find_solvent(tables, options.solvent);
}

namespace {

// Returned by Prediction::signals for a nucleus without signals; immutable.
const std::vector<Signal> kNoSignals;

/// Protons bonded to atom `i`: DEPT-style editing sees 1H only, so 2H and 3H
/// do not count.
int proton_count(const Molecule &m, std::size_t i) {
  int n = 0;
  for (auto it = m.neighbours_begin(i); it != m.neighbours_end(i); ++it) {
    const Atom &a = m.atom(*it);
    if (a.atomic_number == 1 && a.isotope != 2 && a.isotope != 3) ++n;
  }
  return n;
}

}  // namespace

std::vector<Signal> group_signals(const Molecule &molecule, const AtomClasses &classes,
                                  const std::vector<Shift> &shifts) {
  if (classes.chemical.size() != molecule.atom_count())
    throw ArgumentError("group_signals: classes belong to another molecule");
  // Walking the shifts by atom makes each class's lowest atom the one whose
  // values the signal takes, whatever order the shifts came in.
  std::vector<const Shift *> by_atom;
  by_atom.reserve(shifts.size());
  for (const Shift &s : shifts) {
    if (s.atom >= molecule.atom_count())
      throw ArgumentError(fmt::format("group_signals: shift of atom {}, the molecule has {} atoms", s.atom,
                                      molecule.atom_count()));
    by_atom.push_back(&s);
  }
  std::stable_sort(by_atom.begin(), by_atom.end(), [](const Shift *a, const Shift *b) { return a->atom < b->atom; });
  std::vector<Signal> out;
  std::map<std::uint32_t, std::size_t> by_class;  // chemical class -> position in out
  for (const Shift *s : by_atom) {
    const auto [it, added] = by_class.emplace(classes.chemical[s->atom], out.size());
    if (!added) {
      if (out[it->second].atoms.back() != s->atom) out[it->second].atoms.push_back(s->atom);
      continue;
    }
    Signal g;
    g.nucleus = s->nucleus;
    g.ppm = s->ppm;
    g.uncertainty_ppm = s->uncertainty_ppm;
    g.atoms.push_back(s->atom);
    g.attached_h = s->nucleus == Nucleus::C13 ? proton_count(molecule, s->atom) : 0;
    g.method = s->method;
    g.exchangeable = s->exchangeable;
    g.observed = s->observed;
    out.push_back(std::move(g));
  }
  std::sort(out.begin(), out.end(), [](const Signal &a, const Signal &b) {
    if (a.ppm != b.ppm) return a.ppm > b.ppm;
    return a.atoms[0] < b.atoms[0];
  });
  for (auto &g : out) g.count = static_cast<int>(g.atoms.size());
  return out;
}

const Shift *Prediction::shift(std::size_t atom, Nucleus nucleus) const noexcept {
  const std::vector<Shift> *list = nucleus == Nucleus::C13 ? &c13 : nucleus == Nucleus::H1 ? &h1 : nullptr;
  if (!list) return nullptr;
  // Both lists are ascending by atom (predict() checks it).
  const auto it = std::lower_bound(list->begin(), list->end(), atom,
                                   [](const Shift &s, std::size_t a) { return s.atom < a; });
  return it != list->end() && it->atom == atom ? &*it : nullptr;
}

const std::vector<Signal> &Prediction::signals(Nucleus nucleus) const noexcept {
  switch (nucleus) {
    case Nucleus::C13: return c13_signals;
    case Nucleus::H1: return h1_signals;
  }
  return kNoSignals;
}

Prediction predict(const Molecule &molecule, const Tables &tables, const PredictOptions &options) {
  return predict(Molecule(molecule), tables, options);
}

Prediction predict(Molecule &&molecule, const Tables &tables, const PredictOptions &options) {
  Solvent solvent = validate(options, tables);
  Prediction p;
  p.molecule = std::move(molecule);
  p.classes = compute_classes(p.molecule);
  p.hose = hose_codes(p.molecule, p.classes, options.hose_spheres);
  if (p.hose.size() != p.molecule.atom_count())
    throw InternalError(fmt::format("hose_codes returned {} codes for {} atoms", p.hose.size(),
                                    p.molecule.atom_count()));
  p.tables_version = tables.version();
  p.options = options;
  p.warnings = p.classes.notes;
  p.solvent = std::move(solvent);
  // Prediction::shift relies on the order; a shuffled engine result is a bug
  // to report, not to paper over.
  auto check_order = [](const std::vector<Shift> &list, const char *engine) {
    const bool ascending =
        std::is_sorted(list.begin(), list.end(), [](const Shift &a, const Shift &b) { return a.atom < b.atom; });
    if (!ascending) throw InternalError(fmt::format("{} returned shifts out of atom order", engine));
  };
  if (options.predict_shifts) {
    ShiftOptions so;
    so.blind = options.blind;
    so.solvent = p.solvent.name;
    p.c13 = predict_c13(p.molecule, p.classes, tables, so, &p.warnings);
    check_order(p.c13, "predict_c13");
    p.c13_signals = group_signals(p.molecule, p.classes, p.c13);
    if (options.predict_h1) {
      p.h1 = predict_h1(p.molecule, p.classes, tables, so, &p.warnings);
      check_order(p.h1, "predict_h1");
      for (auto &g : group_signals(p.molecule, p.classes, p.h1))
        (g.observed ? p.h1_signals : p.h1_exchanged_signals).push_back(std::move(g));
    }
  }
  return p;
}

RecordPrediction predict_record(ReadRecord record, const Tables &tables, const PredictOptions &options) {
  // A bad solvent is the caller's mistake, not the record's: it throws here
  // instead of failing every record one by one.
  validate(options, tables);
  RecordPrediction out;
  out.record = record.record;
  out.title = std::move(record.title);
  if (record.status != Status::Ok || !record.molecule) {
    out.status = record.status != Status::Ok ? record.status : Status::Internal;
    out.error = record.status != Status::Ok ? std::move(record.error)
                                            : std::string("reader returned neither a molecule nor an error");
    out.failure_warnings = std::move(record.warnings);
    return out;
  }
  if (out.title.empty()) out.title = record.molecule->title();
  // A batch must survive one record that a later stage rejects, so failures are
  // turned into the record's status here; out-of-memory still propagates because
  // carrying on would only fail again.
  try {
    Prediction p = predict(std::move(*record.molecule), tables, options);
    p.warnings.insert(p.warnings.begin(), std::make_move_iterator(record.warnings.begin()),
                      std::make_move_iterator(record.warnings.end()));
    out.prediction = std::move(p);
  } catch (const Error &e) {
    out.status = e.status();
    out.error = e.what();
    out.failure_warnings = std::move(record.warnings);
  } catch (const std::bad_alloc &) {
    throw;
  } catch (const std::exception &e) {
    out.status = Status::Internal;
    out.error = fmt::format("internal error (please report): {}", e.what());
    out.failure_warnings = std::move(record.warnings);
  }
  return out;
}

std::vector<RecordPrediction> predict_all(std::string_view text, Format format, const Tables &tables,
                                          const PredictOptions &options) {
  validate(options, tables);
  std::vector<ReadRecord> records = read_records(text, format);
  std::vector<RecordPrediction> out;
  out.reserve(records.size());
  for (auto &r : records) out.push_back(predict_record(std::move(r), tables, options));
  return out;
}

}  // namespace nmrpred
