#ifndef NMRPRED_SHIFTS_SOURCES_HPP
#define NMRPRED_SHIFTS_SOURCES_HPP

// Each way of estimating a shift is a ShiftSource; the engine asks them in
// order and takes the first answer.

#include <cstdint>
#include <array>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/solvents.hpp>
#include <nmrpred/tables.hpp>

#include "graph/smarts.hpp"
#include "reference_index.hpp"
#include "support/thread_lease.hpp"

namespace nmrpred::detail {

// What a source writes for one atom: the fields of a Shift, with the method
// text in a string the engine reuses from atom to atom (run_sources copies
// it into the prediction's TextPool once per class).
struct ShiftDraft {
  double ppm = 0;
  double uncertainty_ppm = 0;
  ShiftSourceKind source = ShiftSourceKind::Reference;
  int sphere = 0;
  std::string method;
  ReferenceIds references;
  bool exchangeable = false;
  bool observed = true;
  // The value is a table row's for the query's solvent or for any solvent
  // (1H special groups), not one of CDCl3 solutions (predict_h1_on says so
  // in the method otherwise).
  bool solvent_named = false;
  // As a new draft, keeping the method's room.
  void reset() {
    std::string room = std::move(method);
    room.clear();
    *this = ShiftDraft();
    method = std::move(room);
  }
};

// A source's answer kept to be given again (the 13C rules keep theirs per
// atom of the molecule, predict_c13_set a block's): the fields a rules
// answer sets, its method text a slice of a string the keeper owns (a
// string per kept answer cost an allocation each).
struct KeptAnswer {
  double ppm = 0, uncertainty_ppm = 0;
  ShiftSourceKind source = ShiftSourceKind::Increments;
  std::size_t method_at = 0, method_size = 0;
  // `d` kept, its method appended to `texts`.
  static KeptAnswer keep(const ShiftDraft &d, std::string &texts) {
    KeptAnswer a{d.ppm, d.uncertainty_ppm, d.source, texts.size(), d.method.size()};
    texts += d.method;
    return a;
  }
  // Sets the fields of `out` as the kept answer set them.
  void give(std::string_view texts, ShiftDraft &out) const {
    out.ppm = ppm;
    out.uncertainty_ppm = uncertainty_ppm;
    out.source = source;
    out.sphere = 0;
    out.method.assign(texts.substr(method_at, method_size));
    out.references.clear();
  }
};

// Where the method texts of one prediction go (SharedText): blocks, each
// one allocation, filled text by text; a text that does not fit the block
// starts a new one (the old stays with the texts in it). One thread at a
// time; the texts handed out never change.
class TextPool {
 public:
  SharedText add(std::string_view text);
  // Room for `bytes` more characters (the texts and their NULs): the next
  // block is made that large, so that a run's texts share one allocation.
  void expect(std::size_t bytes);

 private:
  SharedText held_;       // its block is the one being filled (the pool is one of its users)
  std::size_t used_ = 0;  // characters of that block taken
  std::size_t room_ = 0;  // the room of the next block
};

// Facts of one molecule that its 13C and 1H predictions share (predict()
// makes one per molecule and passes it to both): the SmartsTarget the
// increment rules match against (ring perception and recursive-pattern
// results are its costly parts) and the HOSE keys. Made on first use; one
// thread at a time. The molecule and classes must outlive it.
class MoleculeFacts {
 public:
  // Which nuclei will ask. BothNuclei: the first keys() call keys every atom
  // a lookup may ask about (lookup_keyed()) in one pass. Keying the carbons
  // first and the protons on the second nucleus's first call re-keyed every
  // atom, more than either nucleus alone costs.
  enum class Askers { OneNucleus, BothNuclei };
  MoleculeFacts(const Molecule &m, const AtomClasses &c, Askers askers = Askers::OneNucleus)
      : molecule_(m), classes_(c), both_nuclei_(askers == Askers::BothNuclei) {
    scratch_.serves(m.atom_count());
  }
  const SmartsTarget &smarts_target() const;
  // The atom's HoseKeys for lookups in `index`. The first call keys the
  // atoms of the asking nucleus in one pass (unless set_all_keys() came first
  // with the same index); an atom outside that pass keys them all.
  const HoseKeys &keys(std::size_t atom, Nucleus asking, const ReferenceIndex &index) const;
  // Takes the keys made by the caller (hose_codes_and_keys) for `index` of
  // the atoms flagged in `keyed` (all atoms when it is empty).
  void set_all_keys(std::vector<HoseKeys> keys, std::vector<bool> keyed, const ReferenceIndex &index);
  // Scratch the engine reuses across the atoms and the runs of both nuclei,
  // so that neither each atom nor each nucleus allocates its own (contents
  // unspecified between uses). The thread's own, lent to one molecule after
  // another (ThreadLease): per molecule it cost five allocations.
  struct Scratch {
    std::vector<std::size_t> positions;  // run_sources: per class, where its first atom's shift is
    std::vector<double> values;          // a lookup's values to summarise
    // predict_c13_on / predict_h1_on: the atoms of the run (the protons
    // on carbon), and the exchangeable protons.
    std::vector<std::size_t> atoms, labile;
    ShiftDraft draft;  // run_sources: the atom being estimated
  };
  Scratch &scratch() const { return *scratch_; }
  // The method texts of both nuclei (run_sources). The molecule's own: the
  // predictions keep its blocks.
  TextPool &texts() const { return texts_; }

 private:
  const Molecule &molecule_;
  const AtomClasses &classes_;
  // The thread's target, lent for the molecule on first use (ThreadLease).
  mutable std::optional<ThreadLease<SmartsTarget>> target_;
  mutable std::vector<bool> keyed_;
  mutable std::vector<HoseKeys> keys_;
  // The index keys_ stop for (see hose_keys()).
  mutable const ReferenceIndex *keyed_for_ = nullptr;
  const bool both_nuclei_;
  ThreadLease<Scratch> scratch_;
  mutable TextPool texts_;
};

// Everything a source may look at for one molecule.
class ShiftQuery {
 public:
  // `shared` (may be null: the query makes its own) are the facts of `m`
  // shared with another query on the same molecule; they outlive the query.
  ShiftQuery(const Molecule &m, const AtomClasses &c, const Tables &t, const ShiftOptions &o, Nucleus n,
             const MoleculeFacts *shared = nullptr)
      : molecule(m), classes(c), tables(t), options(o), nucleus(n), shared_(shared) {}
  const Molecule &molecule;
  const AtomClasses &classes;
  const Tables &tables;
  const ShiftOptions &options;
  Nucleus nucleus;
  // constitution_key() of the molecule, computed on first use (only blind
  // mode needs it).
  std::uint64_t constitution() const;
  // The atom's HoseKeys for tables.reference_index() (MoleculeFacts::keys).
  const HoseKeys &keys(std::size_t atom) const { return facts().keys(atom, nucleus, tables.reference_index()); }
  // Blind mode: reference compounds with the query's constitution (sorted);
  // empty otherwise. Needs tables.reference_index().
  const std::vector<std::uint32_t> &excluded_compounds() const;
  // What the increment rules match their patterns against.
  const SmartsTarget &smarts_target() const { return facts().smarts_target(); }
  // The scratch of the molecule's facts (MoleculeFacts::scratch).
  MoleculeFacts::Scratch &scratch() const { return facts().scratch(); }
  // Where the method texts go (MoleculeFacts::texts).
  TextPool &texts() const { return facts().texts(); }

 private:
  const MoleculeFacts &facts() const {
    if (shared_) return *shared_;
    if (!own_) own_.emplace(molecule, classes);
    return *own_;
  }
  const MoleculeFacts *shared_ = nullptr;
  // In place rather than on the heap: most queries make their own.
  mutable std::optional<MoleculeFacts> own_;
  mutable bool constitution_done_ = false;
  mutable std::uint64_t constitution_ = 0;
  mutable bool excluded_done_ = false;
  mutable std::vector<std::uint32_t> excluded_;
};

class ShiftSource {
 public:
  virtual ~ShiftSource() = default;
  // Fills value, uncertainty, source, sphere, method and references of `out`
  // and returns true, or returns false to pass the atom on. `out` comes as
  // ShiftDraft::reset() leaves it.
  virtual bool estimate(const ShiftQuery &q, std::size_t atom, ShiftDraft &out) const = 0;
};

// The last-resort sources (class averages); stateless, any thread.
const ShiftSource &c13_class_average();
const ShiftSource &h1_class_average();
// 13C increment rules (tables/increments/c13_*.tsv, applied as
// tables/FORMAT.md describes). parse_c13_increment_tables reads and compiles
// the tables (about 0.5 ms, more than the rest of a small molecule's
// prediction; a table absent from `tables` leaves its scheme empty) and
// throws TablesError naming the file and line of a malformed row or an
// unsupported SMARTS. The parsed tables are immutable and may be shared by
// threads. A source object serves one predict_c13 call, or the molecules of
// one predict_c13_set call one after the other, from one thread.
struct C13IncrementTables;
std::shared_ptr<const C13IncrementTables> parse_c13_increment_tables(const Tables &tables);
// `solvent` is the sample's solvent, a name or alias of solvents.tsv; it
// selects the rows of c13_solvent.tsv and is looked up (ArgumentError if
// unknown) only when that table has rows. With `keep_answers` the source
// keeps each carbon's answer for the rest of the molecule (the lookups ask
// about a carbon, and when they give way the engine asks again); without,
// it works each out anew, for a caller that asks once and keeps the answer
// itself.
std::unique_ptr<ShiftSource> make_c13_increments(std::shared_ptr<const C13IncrementTables> parsed,
                                                 const Tables &tables, std::string_view solvent,
                                                 bool keep_answers = true);
// Parses `tables` anew (convenience for callers that have no parsed copy).
std::unique_ptr<ShiftSource> make_c13_increments(const Tables &tables, std::string_view solvent = "CDCl3");

// predict_c13 / predict_h1 (nmrpred/shifts.hpp) with facts of the molecule
// shared by both (null: each makes its own).
std::vector<Shift> predict_c13_on(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                  const ShiftOptions &options, std::vector<std::string> *warnings,
                                  const MoleculeFacts *shared);
std::vector<Shift> predict_h1_on(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                 const ShiftOptions &options, std::vector<std::string> *warnings,
                                 const MoleculeFacts *shared);

// find_solvent(tables, name) (nmrpred/solvents.hpp) without a copy: the
// solvent in the list parsed with the tables, or, for tables without one, in
// `owned`, which is filled. Errors as find_solvent().
const Solvent &find_solvent_ref(const Tables &tables, std::string_view name, std::optional<Solvent> &owned);

// Whether the reference lookups of predict_c13_on / predict_h1_on may ask
// for the HOSE keys of `atom`: carbons, and protons that are neither on O, N
// or S nor deuterium or tritium.
bool lookup_keyed(const Molecule &m, std::size_t atom);

// Flags in `keyed` (resized to the atom count) the atoms the first keys()
// call of MoleculeFacts keys in one pass: lookup_keyed() atoms of the asking
// nucleus, or of both.
void flag_keyed(const Molecule &m, Nucleus asking, bool both_nuclei, std::vector<bool> &keyed);

}  // namespace nmrpred::detail

#endif
