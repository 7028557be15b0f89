#ifndef NMRPRED_IO_HPP
#define NMRPRED_IO_HPP

/// \file io.hpp
/// Structure input. The only part of the library that talks to Open Babel; it
/// turns text into nmrpred::Molecule once and never exposes Open Babel types.
///
/// Thread rule: every function may be called from any thread. Open Babel keeps
/// process-wide state, so calls into it are serialized internally; conversion
/// of the result into Molecule happens outside that lock.

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
/// otherwise Smiles.
NMRPRED_API Format detect_format(std::string_view text);

/// One record read from the input: either a molecule or the reason it failed.
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
class NMRPRED_API MoleculeReader {
 public:
  /// Reads from `in`, which must outlive the reader. Format Auto peeks at the
  /// start of the stream to decide.
  MoleculeReader(std::istream &in, Format format = Format::Auto);
  ~MoleculeReader();
  MoleculeReader(const MoleculeReader &) = delete;
  MoleculeReader &operator=(const MoleculeReader &) = delete;
  /// Fills `out` with the next record; returns false at end of input.
  bool next(ReadRecord &out);
  Format format() const noexcept;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Reads every record in `text`.
NMRPRED_API std::vector<ReadRecord> read_records(std::string_view text, Format format = Format::Auto);

/// Reads exactly one molecule; throws InputError (message names the problem)
/// if the text holds none or it cannot be read. Extra records are an error.
NMRPRED_API Molecule read_molecule(std::string_view text, Format format = Format::Auto);

}  // namespace nmrpred

#endif
