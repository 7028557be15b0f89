#include <nmrpred/predict.hpp>

#include <algorithm>
#include <exception>
#include <map>
#include <new>
#include <utility>

#include <fmt/format.h>

#include "shifts/sources.hpp"

namespace nmrpred {

void validate(const PredictOptions &options) {
  if (options.hose_spheres < 1 || options.hose_spheres > kMaxHoseSpheres)
    throw ArgumentError(fmt::format("hose_spheres must be between 1 and {}, got {}", kMaxHoseSpheres,
                                    options.hose_spheres));
  // The negated comparisons also reject NaN.
  if (!(options.field_mhz >= 40 && options.field_mhz <= 1200))
    throw ArgumentError(fmt::format("field_mhz must be between 40 and 1200 MHz (1H frequency), got {}",
                                    options.field_mhz));
  if (!(options.line_width_hz > 0 && options.line_width_hz <= 100))
    throw ArgumentError(fmt::format("line_width_hz must be above 0 and at most 100 Hz, got {}",
                                    options.line_width_hz));
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

/// Largest exact block of the simulation inside predict(). Every prediction
/// pays for its simulation, and the engine's default (512) costs seconds on a
/// long alkyl chain, whose CH2 protons all couple strongly (3.2 s CPU for
/// dodecane-1-thiol, measured on the NCI sample); at 64 such clusters are
/// split at their weakest couplings, with a warning, and their multiplets are
/// an "m" either way. Callers wanting the full treatment call simulate()
/// themselves.
constexpr std::size_t kPipelineMaxBlockSize = 64;

/// Copies label, couplings and lines of each multiplet onto the signal with
/// the same atoms. Returns the number of signals left without a multiplet.
std::size_t attach_multiplets(std::vector<Signal> &signals, const std::vector<Multiplet> &multiplets,
                              bool with_lines) {
  std::map<std::vector<std::size_t>, const Multiplet *> by_atoms;
  for (const Multiplet &m : multiplets) by_atoms.emplace(m.atoms, &m);
  std::size_t missing = 0;
  for (Signal &g : signals) {
    const auto it = by_atoms.find(g.atoms);
    if (it == by_atoms.end()) {
      ++missing;
      continue;
    }
    g.multiplicity = it->second->label;
    g.j_hz = it->second->j_hz;
    if (with_lines) g.lines = it->second->lines;
  }
  return missing;
}

/// True when a coupling splits the lines of a proton-decoupled 13C spectrum:
/// carbon to fluorine, phosphorus or deuterium.
bool splits_carbon(const Molecule &m, const Coupling &c) {
  const Atom &x = m.atom(c.a), &y = m.atom(c.b);
  auto partner = [](const Atom &a) {
    return a.atomic_number == 9 || a.atomic_number == 15 || (a.atomic_number == 1 && a.isotope == 2);
  };
  return (x.atomic_number == 6 && partner(y)) || (y.atomic_number == 6 && partner(x));
}

/// Couplings, the 1H simulation and what they give the signals. The shifts
/// stay useful when this stage fails on a molecule, so a failure becomes a
/// warning instead of failing the record; only running out of memory passes.
void couple_and_simulate(Prediction &p, const Tables &tables, const PredictOptions &options) {
  SimulationOptions so;
  so.field_mhz = options.field_mhz;
  so.line_width_hz = options.line_width_hz;
  so.max_block_size = kPipelineMaxBlockSize;
  std::vector<std::string> warnings;
  try {
    p.couplings = predict_couplings(p.molecule, p.classes, tables, CouplingOptions{}, &warnings);
    const bool any_observed_h = std::any_of(p.h1.begin(), p.h1.end(), [](const Shift &s) { return s.observed; });
    std::vector<Signal> h1 = p.h1_signals;
    std::optional<Simulation> h1_sim;
    if (options.predict_h1 && any_observed_h) {
      h1_sim = simulate(p, p.couplings, Nucleus::H1, so);
      if (const std::size_t missing = attach_multiplets(h1, h1_sim->multiplets, true))
        warnings.push_back(fmt::format("{} 1H signal(s) got no simulated multiplet", missing));
      warnings.insert(warnings.end(), h1_sim->warnings.begin(), h1_sim->warnings.end());
    }
    std::vector<Signal> c13 = p.c13_signals;
    // Most molecules have no carbon a heteronucleus splits; they skip the
    // 13C simulation and keep empty 13C multiplicities (a proton-decoupled
    // singlet is written without one).
    if (!p.c13.empty() && std::any_of(p.couplings.begin(), p.couplings.end(),
                                      [&](const Coupling &c) { return splits_carbon(p.molecule, c); })) {
      Simulation c13_sim = simulate(p, p.couplings, Nucleus::C13, so);
      attach_multiplets(c13, c13_sim.multiplets, false);
      for (Signal &g : c13)
        if (g.multiplicity == "s") {
          g.multiplicity.clear();
          g.j_hz.clear();
        }
    }
    p.h1_signals = std::move(h1);
    p.c13_signals = std::move(c13);
    p.h1_simulation = std::move(h1_sim);
  } catch (const Error &e) {
    p.couplings.clear();
    warnings.push_back(fmt::format("couplings and multiplets not predicted: {}", e.what()));
  }
  p.warnings.insert(p.warnings.end(), std::make_move_iterator(warnings.begin()),
                    std::make_move_iterator(warnings.end()));
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
  out.reserve(by_atom.size());
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
  // Sorted by position, then moved once: a Signal is several strings and
  // vectors, and sorting them in place moves each many times. No two
  // signals share a first atom, so the order is the same for any sort.
  std::vector<std::size_t> order(out.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&out](std::size_t i, std::size_t j) {
    const Signal &a = out[i], &b = out[j];
    if (a.ppm != b.ppm) return a.ppm > b.ppm;
    return a.atoms[0] < b.atoms[0];
  });
  std::vector<Signal> sorted;
  sorted.reserve(out.size());
  for (auto i : order) {
    sorted.push_back(std::move(out[i]));
    sorted.back().count = static_cast<int>(sorted.back().atoms.size());
  }
  return sorted;
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
  // The shift lookups key carbons and carbon-bound protons by their HOSE
  // codes of up to six spheres; the codes come from the same engine runs.
  std::vector<detail::HoseKeys> keys;
  std::vector<bool> keyed;
  if (options.predict_shifts) {
    keyed.resize(p.molecule.atom_count());
    for (std::size_t a = 0; a < keyed.size(); ++a) keyed[a] = detail::lookup_keyed(p.molecule, a);
  }
  p.hose = options.predict_shifts
               ? detail::hose_codes_and_keys(p.molecule, p.classes, options.hose_spheres, keyed, keys,
                                             &tables.reference_index())
               : hose_codes(p.molecule, p.classes, options.hose_spheres);
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
    // Ring perception, recursive-pattern results and HOSE keys are facts of
    // the molecule, not of the nucleus: made once for both.
    detail::MoleculeFacts facts(p.molecule, p.classes);
    facts.set_all_keys(std::move(keys), std::move(keyed), tables.reference_index());
    p.c13 = detail::predict_c13_on(p.molecule, p.classes, tables, so, &p.warnings, &facts);
    check_order(p.c13, "predict_c13");
    p.c13_signals = group_signals(p.molecule, p.classes, p.c13);
    if (options.predict_h1) {
      p.h1 = detail::predict_h1_on(p.molecule, p.classes, tables, so, &p.warnings, &facts);
      check_order(p.h1, "predict_h1");
      for (auto &g : group_signals(p.molecule, p.classes, p.h1))
        (g.observed ? p.h1_signals : p.h1_exchanged_signals).push_back(std::move(g));
    }
    if (options.predict_couplings) couple_and_simulate(p, tables, options);
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
