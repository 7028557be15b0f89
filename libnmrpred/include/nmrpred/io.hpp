#ifndef NMRPRED_IO_HPP
#define NMRPRED_IO_HPP

/// \file io.hpp
/// Structure input. The only part of the library that talks to Open Babel; it
/// turns text into nmrpred::Molecule once and never exposes Open Babel types.
///
/// Thread rule: every function may be called from any thread. Open Babel keeps
/// process-wide state, so calls into it are serialized internally; conversion
/// of the result into Molecule happens outside that lock. While it holds that
/// lock, io/ points Open Babel's global message log (obErrorLog) at a sink of
/// its own and clears the log after each record, so Open Babel never prints;
/// its messages end up in ReadRecord::error / ReadRecord::warnings instead.
///
/// What the reader produces (see also molecule.hpp):
///  - Atom order: heavy atoms in input order; then per heavy atom its hydrogens
///    given in the input (input order), then the implicit ones the reader adds;
///    then hydrogens bonded to no heavy atom (H2, [H+]). Deuterium and tritium
///    are hydrogens with isotope 2 / 3. Molecule::input_index() maps back to the
///    record (-1 for added hydrogens). Bonds are sorted by (begin, end).
///  - Bonds: Single, Double, Triple, or Aromatic when Open Babel perceives the
///    bond as aromatic, so Kekule and aromatic input of a ring compare equal.
///    Quadruple and zero-order bonds give Status::Unsupported, query bond types
///    (MDL 5-8) Status::Input.
///  - Radicals: MDL "M  RAD" (doublet 1, singlet and triplet 2 electrons); for
///    SMILES and InChI, the electrons an atom lacks to its typical valence
///    ([CH3] 1, [CH2] 2), because both state hydrogen counts exactly.
///  - Stereo: only what the input specifies (SMILES @/@@ and / \\, MOL wedges,
///    V3000 CFG, atom parities, 2D/3D geometry, InChI /t /b layers). Double
///    bonds in rings of fewer than 8 atoms get no entry (their geometry is forced).
///    A tetrahedral reference to an implicit hydrogen names the added hydrogen;
///    a centre without one gets kLonePair (sulfoxide sulfur, amine nitrogen).
///  - Coordinates: kept only when every atom of the result has them, i.e. the
///    input had coordinates and no hydrogen had to be added; all-zero
///    coordinates count as none. Otherwise Molecule::coordinates() is empty.
///  - Errors name the record, 0-based, and the line it starts on:
///    "record 3 (line 120): ...".

#include <cstddef>
#include <istream>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/error.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/molecule.hpp>

namespace nmrpred {

/// Structure text formats. Auto recognises the format from the content.
enum class Format { Auto, Smiles, Mol, Sdf, Inchi };

/// Parses "auto", "smi"/"smiles", "mol"/"mdl", "sdf"/"sd", "inchi" (case-insensitive).
/// Throws ArgumentError for anything else.
NMRPRED_API Format parse_format(std::string_view name);
/// Canonical lower-case name of a format ("smiles", "mol", "sdf", "inchi", "auto").
NMRPRED_API const char *format_name(Format format) noexcept;
/// Recognises the format of `text` from its content: "InChI=" -> Inchi, an MDL
/// counts line / "M  END" / "$$$$" -> Sdf (a single record is also valid Sdf),
/// otherwise Smiles. Only the first 8 lines are examined (the same lines
/// MoleculeReader peeks at); up to 4 blank lines before a MOL header are
/// tolerated. Never throws (except std::bad_alloc).
NMRPRED_API Format detect_format(std::string_view text);

/// One record read from the input: either a molecule or the reason it failed.
/// Plain value; `error` starts with "record N (line L): ".
struct ReadRecord {
  std::size_t record = 0;              ///< 0-based position of the record in the input
  std::optional<Molecule> molecule;    ///< set when status == Status::Ok
  Status status = Status::Ok;
  std::string error;                   ///< message when status != Ok
  std::vector<std::string> warnings;   ///< reader warnings (Open Babel's messages included)
  std::string title;                   ///< SMILES title / MOL name line, may be empty
};

/// Streams records from a text source one at a time, so a large SDF never sits
/// in memory whole. A bad record yields a ReadRecord with an error; reading goes
/// on with the next one.
///
/// Records: Smiles and Inchi read one record per non-empty line; the text after
/// the first whitespace is the title. Mol and Sdf split the input at "$$$$"
/// lines; each record must contain an MDL counts line as line 4 and an
/// "M  END" line (otherwise "truncated MOL block"); its first line is the
/// title. Blank lines after the last "$$$$" are not a record; an empty record
/// between two "$$$$" lines is one (with an error). A record over 64 MiB is
/// skipped with an error. InChI strings are checked for layer syntax before
/// they reach the InChI library. CR LF line ends are accepted.
///
/// Thread rule: one reader belongs to one thread; different readers may run
/// in parallel.
class NMRPRED_API MoleculeReader {
 public:
  /// Reads from `in`, which must outlive the reader. Format Auto peeks at the
  /// start of the stream (up to 8 lines, kept for reading) to decide.
  MoleculeReader(std::istream &in, Format format = Format::Auto);
  ~MoleculeReader();
  MoleculeReader(const MoleculeReader &) = delete;
  MoleculeReader &operator=(const MoleculeReader &) = delete;
  /// Fills `out` with the next record (resetting every field); returns false at
  /// end of input. Problems with the record itself are reported in `out`, not
  /// thrown; throws InputError only if the stream fails (badbit).
  bool next(ReadRecord &out);
  /// The format being read: the one given, or the one recognised for Auto.
  Format format() const noexcept;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Reads every record in `text`; empty or blank text gives no records. Bad
/// records are returned with their error, not thrown. `text` is not copied and
/// need only live for the duration of the call.
NMRPRED_API std::vector<ReadRecord> read_records(std::string_view text, Format format = Format::Auto);

/// Reads exactly one molecule; throws InputError (message names the problem)
/// if the text holds none ("no molecule in input") or it cannot be read, and
/// UnsupportedError for valid input the library does not handle (quadruple
/// bond, InChI plugin missing). Extra records are an InputError.
NMRPRED_API Molecule read_molecule(std::string_view text, Format format = Format::Auto);

}  // namespace nmrpred

#endif
