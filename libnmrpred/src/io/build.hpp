#ifndef NMRPRED_SRC_IO_BUILD_HPP
#define NMRPRED_SRC_IO_BUILD_HPP

#include <functional>
#include <string>
#include <vector>

#include <nmrpred/molecule.hpp>

#include "io/raw_molecule.hpp"

namespace nmrpred::io::detail {

// Returns a short description of input atom i for error messages, e.g.
// "'Xx' on line 5 of the record"; may return an empty string.
using AtomDescriber = std::function<std::string(std::size_t input_atom)>;

// Turns what Open Babel read into MoleculeData in the library's atom order:
// heavy atoms in input order, then per heavy atom its explicit hydrogens (input
// order) followed by the implicit ones added here, then hydrogens bonded to no
// heavy atom. Bonds are sorted by (begin, end). Stereo references that cannot
// be mapped are dropped with a message in `warnings`. Coordinates are kept only
// when every atom of the result has input coordinates (no hydrogen was added).
// Throws InputError / UnsupportedError naming the first unusable atom or bond.
MoleculeData build_molecule_data(const RawMolecule &raw, const AtomDescriber &describe_atom,
                                 std::vector<std::string> &warnings);

}  // namespace nmrpred::io::detail

#endif
