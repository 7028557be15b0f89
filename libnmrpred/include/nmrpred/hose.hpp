#ifndef NMRPRED_HOSE_HPP
#define NMRPRED_HOSE_HPP

/// \file hose.hpp
/// HOSE-style environment codes after W. Bremser, Anal. Chim. Acta 103 (1978) 355.
/// The exact syntax and priority ordering are documented in docs/hose.md.
///
/// Thread rule: pure functions; call from any thread.

#include <cstddef>
#include <string>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/molecule.hpp>

namespace nmrpred {

/// Largest number of spheres a code may describe.
inline constexpr int kMaxHoseSpheres = 6;
/// Default number of spheres.
inline constexpr int kDefaultHoseSpheres = 4;

/// HOSE code of one atom with `spheres` spheres (1..kMaxHoseSpheres; ArgumentError
/// otherwise or if `atom` is out of range). `classes` must come from
/// compute_classes(molecule); it supplies the order-independent tie-break.
NMRPRED_API std::string hose_code(const Molecule &molecule, const AtomClasses &classes,
                                  std::size_t atom, int spheres = kDefaultHoseSpheres);

/// HOSE codes of all atoms (hydrogens included).
NMRPRED_API std::vector<std::string> hose_codes(const Molecule &molecule, const AtomClasses &classes,
                                                int spheres = kDefaultHoseSpheres);

}  // namespace nmrpred

#endif
