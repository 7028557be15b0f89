#ifndef NMRPRED_CLASSES_HPP
#define NMRPRED_CLASSES_HPP

/// \file classes.hpp
/// Equivalent atoms. Two partitions of all atoms (hydrogens included):
///  - topological: orbits of the automorphism group of the coloured graph
///    (element, isotope, charge, radical, aromaticity; bond order);
///  - chemical (the default "class"): atoms exchanged by a symmetry of the
///    molecule, proper or improper (homotopic and enantiotopic atoms), taking
///    configuration at tetrahedral centres and double bonds into account, so
///    diastereotopic atoms fall into different classes.
/// Stereo elements the input left unspecified still count; they are given one
/// canonical configuration (see docs/equivalence.md) and reported in notes.
///
/// Thread rule: pure function of its input; call from any thread.

#include <cstdint>
#include <string>
#include <vector>

#include <nmrpred/export.hpp>
#include <nmrpred/molecule.hpp>

namespace nmrpred {

struct AtomClasses {
  /// Per atom: topological class id. Ids are dense, numbered 0.. in order of the
  /// lowest atom index of each class.
  std::vector<std::uint32_t> topological;
  /// Per atom: chemical (stereo-aware) class id, numbered the same way. Always a
  /// refinement of `topological`.
  std::vector<std::uint32_t> chemical;
  /// Per atom: rank from iterative refinement of graph invariants; independent
  /// of input atom order; equal ranks for atoms in the same topological class.
  std::vector<std::uint32_t> invariant_rank;
  std::uint32_t topological_count = 0;
  std::uint32_t chemical_count = 0;
  /// Remarks (unspecified stereo elements that were given a canonical
  /// configuration, search limits reached, ...). Never errors.
  std::vector<std::string> notes;
  friend bool operator==(const AtomClasses &a, const AtomClasses &b) {
    return a.topological == b.topological && a.chemical == b.chemical;
  }
};

/// Computes both partitions. Bounded work: a budget on the automorphism search
/// keeps pathological graphs finite; if it runs out, atoms whose equivalence was
/// not proven stay in separate classes and a note says so.
NMRPRED_API AtomClasses compute_classes(const Molecule &molecule);

/// A 64-bit key of the constitution (atoms, isotopes, charges, bonds; no
/// stereo) computed from `classes.invariant_rank`: equal for every atom order
/// of one molecule, different for different constitutions except by hash
/// collision or for graphs that colour refinement cannot tell apart (never
/// seen among real molecules). Used to recognise "the same compound", e.g.
/// to leave it out of a lookup. Thread rule: pure.
NMRPRED_API std::uint64_t constitution_key(const Molecule &molecule, const AtomClasses &classes);

}  // namespace nmrpred

#endif
