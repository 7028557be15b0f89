#ifndef NMRPRED_GRAPH_HEAVY_CLASSES_HPP
#define NMRPRED_GRAPH_HEAVY_CLASSES_HPP

// Private to the library: equivalence classes of the heavy atoms without the
// hydrogens in the graph, for predictions that ask nothing of a hydrogen's
// own class (13C).

#include <nmrpred/classes.hpp>
#include <nmrpred/molecule.hpp>

namespace nmrpred::detail {

// The classes compute_classes() gives the heavy atoms, found on the graph of
// the heavy atoms alone with each one's hydrogen count in its colour, which
// spares the hydrogens' refinement and searches (about half the atoms of a
// typical organic molecule); docs/equivalence.md says why they agree.
// Written over `out` and true when that graph settles them: out.topological
// is then compute_classes()'s for every atom, out.chemical for every heavy
// atom (a hydrogen gets its parent's class, not its own: diastereotopic
// hydrogens are not told apart), and out.invariant_rank is an
// order-independent rank equal within each topological class, but not
// compute_classes()'s (so no constitution key may be taken from it); no
// notes. False, with `out` unspecified, for the molecules it leaves to
// compute_classes(): two fragments that are copies of one another, a
// hydrogen that is not a plain terminal 1H on a single bond, an atom with
// both an implicit hydrogen and a lone pair, an unspecified stereo element
// that a symmetry could map onto another one where the configuration picked
// could change the classes, or a symmetry search that ran out of budget.
bool heavy_atom_classes(const Molecule &molecule, AtomClasses &out);

}  // namespace nmrpred::detail

#endif
