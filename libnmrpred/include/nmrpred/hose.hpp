#ifndef NMRPRED_HOSE_HPP
#define NMRPRED_HOSE_HPP

/// \file hose.hpp
/// HOSE-style environment codes after W. Bremser, Anal. Chim. Acta 103 (1978) 355.
/// The exact syntax and priority ordering are documented in docs/hose.md.
///
/// Thread rule: pure functions; call from any thread.

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/molecule.hpp>

namespace nmrpred {

/// Largest number of spheres a code may describe.
inline constexpr int kMaxHoseSpheres = 6;
/// Default number of spheres.
inline constexpr int kDefaultHoseSpheres = 4;

/// HOSE code of one atom with `spheres` spheres (1..kMaxHoseSpheres), as a new
/// string owned by the caller. `classes` should come from
/// compute_classes(molecule). Syntax and ordering rules: docs/hose.md.
///
/// The text is canonical: the same for every input atom order, the same for
/// atoms exchanged by a symmetry of the molecule, and a function of the atoms
/// and bonds within `spheres` bonds of `atom` only. A code with k spheres equals
/// the first k spheres of the code with more spheres (see join_hose_spheres()).
/// Hydrogens are centres like any atom but are never written inside a sphere.
/// The code does not depend on `classes`: its size is checked, and its
/// invariant_rank only speeds up the tie search. For many atoms of one
/// molecule use hose_codes(), which sets up the molecule once.
///
/// Example: the methyl carbon of ethanol, 4 spheres: "C-4;C(O//)".
/// Errors: ArgumentError (spheres out of range, atom out of range, `classes`
/// sized for another molecule). Thread rule: pure; call from any thread.
NMRPRED_API std::string hose_code(const Molecule &molecule, const AtomClasses &classes,
                                  std::size_t atom, int spheres = kDefaultHoseSpheres);

/// HOSE codes of all atoms (hydrogens included), indexed like the atoms.
/// Identical to calling hose_code() for each atom, but computes each code once
/// per topological class of `classes` (and once per heavy atom for its
/// hydrogens). Atoms sharing a class must therefore be exchanged by a symmetry
/// of the molecule, as compute_classes(molecule) guarantees; one class per atom
/// is also valid and only shares less work.
/// Errors: ArgumentError as for hose_code(). Thread rule: pure.
NMRPRED_API std::vector<std::string> hose_codes(const Molecule &molecule, const AtomClasses &classes,
                                                int spheres = kDefaultHoseSpheres);

/// The parts of hose_code(molecule, classes, atom, spheres): element 0 is the
/// centre ("C-4"), element k (1..spheres) the text of sphere k with its groups
/// separated by ','. Always spheres + 1 elements; a sphere with nothing in it
/// is "". Shift lookup compares codes sphere by sphere with these.
/// Sets up the molecule on every call: for many atoms use hose_spheres_all().
/// Errors: ArgumentError as for hose_code(). Thread rule: pure.
NMRPRED_API std::vector<std::string> hose_spheres(const Molecule &molecule, const AtomClasses &classes,
                                                  std::size_t atom, int spheres = kDefaultHoseSpheres);

/// hose_spheres() for every atom (hydrogens included), indexed like the atoms:
/// element a equals hose_spheres(molecule, classes, a, spheres). Like
/// hose_codes(), it sets the molecule up once and computes each topological
/// class of `classes` once (and once per heavy atom for its hydrogens), so
/// coding many atoms of one molecule costs far less than calling
/// hose_spheres() for each. The result is owned by the caller.
/// Errors: ArgumentError as for hose_codes(). Thread rule: pure.
NMRPRED_API std::vector<std::vector<std::string>> hose_spheres_all(const Molecule &molecule,
                                                                   const AtomClasses &classes,
                                                                   int spheres = kDefaultHoseSpheres);

/// Builds a code from the centre and the first `spheres` spheres of `parts`
/// (as returned by hose_spheres() or split_hose_code()). Because codes are
/// prefix-stable, join_hose_spheres(hose_spheres(m, c, a, 6), k) equals
/// hose_code(m, c, a, k) for every k <= 6.
/// Errors: ArgumentError if `spheres` is outside 1..kMaxHoseSpheres or `parts`
/// holds fewer than spheres + 1 elements. Thread rule: pure.
NMRPRED_API std::string join_hose_spheres(const std::vector<std::string> &parts, int spheres);

/// Splits a code into its centre and spheres (the inverse of
/// join_hose_spheres()): "C-4;C(O//)" -> {"C-4", "C", "O", "", ""}. A code with
/// no brackets has one sphere. Only the separators are checked, not the atoms.
/// Errors: InputError naming the problem (no ';', empty centre, unbalanced
/// brackets, more than kMaxHoseSpheres spheres). Thread rule: pure.
NMRPRED_API std::vector<std::string> split_hose_code(std::string_view code);

}  // namespace nmrpred

#endif
