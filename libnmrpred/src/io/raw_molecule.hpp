#ifndef NMRPRED_SRC_IO_RAW_MOLECULE_HPP
#define NMRPRED_SRC_IO_RAW_MOLECULE_HPP

// What io/ copies out of Open Babel while it holds the Open Babel lock: plain
// data in input order, so that building the Molecule (hydrogen placement,
// stereo mapping, validation) runs outside the lock.

#include <array>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>

namespace nmrpred::io::detail {

// Stereo reference that is not an input atom.
inline constexpr std::int32_t kRefImplicit = -2;  // Open Babel's ImplicitRef: implicit H or lone pair
inline constexpr std::int32_t kRefNone = -3;      // missing reference

struct RawAtom {
  int atomic_number = 0;
  int isotope = 0;
  int formal_charge = 0;
  int radical_electrons = 0;
  bool aromatic = false;
  int implicit_hydrogens = 0;
  double x = 0.0, y = 0.0, z = 0.0;
};

struct RawBond {
  std::uint32_t begin = 0;  // 0-based input atom positions
  std::uint32_t end = 0;
  int order = 1;            // Open Babel's bond order (Kekule form for aromatic bonds)
  bool aromatic = false;
};

// Looking from ligands[0] towards the centre, ligands[1..3] run clockwise.
struct RawTetrahedral {
  std::uint32_t centre = 0;
  std::array<std::int32_t, 4> ligands{{kRefNone, kRefNone, kRefNone, kRefNone}};
};

// refs[0], refs[1] are bonded to begin, refs[2], refs[3] to end. In the
// U-shaped order Open Babel uses, refs[0]/refs[3] and refs[1]/refs[2] are cis.
struct RawCisTrans {
  std::uint32_t begin = 0;
  std::uint32_t end = 0;
  std::array<std::int32_t, 4> refs{{kRefNone, kRefNone, kRefNone, kRefNone}};
};

struct RawMolecule {
  std::vector<RawAtom> atoms;
  std::vector<RawBond> bonds;
  std::vector<RawTetrahedral> tetrahedral;  // specified centres only
  std::vector<RawCisTrans> cis_trans;       // specified double bonds only
  int dimension = 0;                        // 0, 2 or 3
};

struct RawRead {
  Status status = Status::Ok;
  std::string error;                  // without the "record N: " prefix
  std::vector<std::string> messages;  // Open Babel's messages, one line each
  RawMolecule molecule;
};

// Parses one record's text with Open Babel. `format` is Smiles, Mol or Inchi
// (Sdf records are passed as Mol). For Smiles and Inchi the text is the bare
// string without title. Thread-safe: takes the process-wide Open Babel lock.
// Never throws except std::bad_alloc.
RawRead read_with_open_babel(std::string_view text, Format format);

// The release of the Open Babel library doing the reading ("3.1.1"): its
// perception (aromaticity, hydrogens) decides the graphs read.
std::string reader_version();

}  // namespace nmrpred::io::detail

#endif
