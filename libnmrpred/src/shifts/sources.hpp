#ifndef NMRPRED_SHIFTS_SOURCES_HPP
#define NMRPRED_SHIFTS_SOURCES_HPP

// Each way of estimating a shift is a ShiftSource; the engine asks them in
// order and takes the first answer.

#include <cstdint>
#include <memory>
#include <string>
#include <unordered_map>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include "graph/smarts.hpp"
#include "reference_index.hpp"

namespace nmrpred::detail {

// Everything a source may look at for one molecule.
class ShiftQuery {
 public:
  // `shared` (may be null) is a SmartsTarget of `m` that outlives the query,
  // for callers that predict both nuclei of one molecule.
  ShiftQuery(const Molecule &m, const AtomClasses &c, const Tables &t, const ShiftOptions &o, Nucleus n,
             const SmartsTarget *shared = nullptr)
      : molecule(m), classes(c), tables(t), options(o), nucleus(n), shared_target_(shared) {}
  const Molecule &molecule;
  const AtomClasses &classes;
  const Tables &tables;
  const ShiftOptions &options;
  Nucleus nucleus;
  // constitution_key() of the molecule, computed on first use (only blind
  // mode needs it).
  std::uint64_t constitution() const;
  // hose_key() of the atom's HOSE code with 0..kMaxHoseSpheres spheres. The
  // first call keys every atom of the query's nucleus at once (one engine run
  // per topological class); an atom of another kind keys them all.
  const HoseKeys &keys(std::size_t atom) const;
  // Blind mode: reference compounds with the query's constitution (sorted);
  // empty otherwise. Needs tables.reference_index().
  const std::vector<std::uint32_t> &excluded_compounds() const;
  // What the increment rules match their patterns against: the shared
  // target given to the constructor, else one made on first use. Ring
  // perception and recursive-pattern results are its costly parts, so the
  // 13C and 1H runs on one molecule share it.
  const SmartsTarget &smarts_target() const;

 private:
  const SmartsTarget *shared_target_ = nullptr;
  mutable std::unique_ptr<SmartsTarget> own_target_;
  mutable bool constitution_done_ = false;
  mutable std::uint64_t constitution_ = 0;
  mutable bool excluded_done_ = false;
  mutable std::vector<std::uint32_t> excluded_;
  mutable std::vector<bool> keyed_;
  mutable std::vector<HoseKeys> keys_;
};

class ShiftSource {
 public:
  virtual ~ShiftSource() = default;
  // Fills value, uncertainty, source, sphere, method and references of `out`
  // and returns true, or returns false to pass the atom on.
  virtual bool estimate(const ShiftQuery &q, std::size_t atom, Shift &out) const = 0;
};

// `increments` (may be null) corrects shallow matches; see predict.cpp.
std::unique_ptr<ShiftSource> make_reference_lookup(bool user, const ShiftSource *increments);
std::unique_ptr<ShiftSource> make_c13_class_average();
std::unique_ptr<ShiftSource> make_h1_class_average();
// 13C increment rules (tables/increments/c13_*.tsv, applied as
// tables/FORMAT.md describes). parse_c13_increment_tables reads and compiles
// the tables (about 0.5 ms, more than the rest of a small molecule's
// prediction; a table absent from `tables` leaves its scheme empty) and
// throws TablesError naming the file and line of a malformed row or an
// unsupported SMARTS. The parsed tables are immutable and may be shared by
// threads. A source object serves one predict_c13 call, from one thread.
struct C13IncrementTables;
std::shared_ptr<const C13IncrementTables> parse_c13_increment_tables(const Tables &tables);
std::unique_ptr<ShiftSource> make_c13_increments(std::shared_ptr<const C13IncrementTables> parsed);
// Parses `tables` anew (convenience for callers that have no parsed copy).
std::unique_ptr<ShiftSource> make_c13_increments(const Tables &tables);

// predict_c13 / predict_h1 (nmrpred/shifts.hpp) with a SmartsTarget of the
// molecule shared by both (null: each makes its own).
std::vector<Shift> predict_c13_on(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                  const ShiftOptions &options, std::vector<std::string> *warnings,
                                  const SmartsTarget *shared);
std::vector<Shift> predict_h1_on(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                 const ShiftOptions &options, std::vector<std::string> *warnings,
                                 const SmartsTarget *shared);

std::vector<Shift> run_sources(const ShiftQuery &q, const std::vector<const ShiftSource *> &sources,
                               const std::vector<std::size_t> &atoms, std::vector<std::string> *warnings);

}  // namespace nmrpred::detail

#endif
