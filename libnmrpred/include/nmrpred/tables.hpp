#ifndef NMRPRED_TABLES_HPP
#define NMRPRED_TABLES_HPP

/// \file tables.hpp
/// The data behind predictions: reference compounds with assigned shifts and
/// the published rule tables, as the text files of tables/ describe them
/// (tables/FORMAT.md). The built-in set is compiled into the library; a
/// replacement set can be read from a folder; a user's own assigned compounds
/// can be added on top and take precedence.
///
/// Thread rule: a Tables object is immutable once made and may be shared by any
/// number of threads (hold it through std::shared_ptr<const Tables>).

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/export.hpp>

namespace nmrpred {

namespace detail {
struct ReferenceIndex;
struct C13IncrementTables;
struct H1IncrementTables;
struct CouplingTables;
}

/// One assignment of a reference record: `atoms` (heavy-atom indices in the
/// record's SMILES order) with `values` (ppm). One value applies to every atom;
/// two values on one atom are a diastereotopic pair of protons; two values on
/// two atoms are an unassigned pair (tables/FORMAT.md).
struct ReferenceAssignment {
  std::vector<std::uint32_t> atoms;
  std::vector<double> values;
  /// The `i|j=a|b` form: two atoms, one value each, which is which not
  /// stated. False for `i=a|b` and `i,j=a|b`, where every listed atom carries
  /// both values (its two diastereotopic protons).
  bool pair_atoms = false;
};

/// One assigned compound.
struct ReferenceCompound {
  std::string id;
  std::string smiles;
  std::string solvent;
  std::string source;  ///< key from tables/SOURCES.md, maybe followed by " (from memory)"
  std::vector<ReferenceAssignment> c13;
  std::vector<ReferenceAssignment> h1;
  bool user = false;  ///< added by the user at run time
  std::string file;   ///< table file it came from
  std::size_t line = 0;  ///< line of the record in that file (1-based)
};

/// An immutable set of tables.
class NMRPRED_API Tables {
 public:
  /// The set compiled into the library. Parses it and builds its lookup structures
  /// anew on every call (about 0.05 s; the reference compounds' index entries are
  /// worked out when the library is built): create it once and share it.
  /// Throws TablesError if a built-in table is malformed (a build defect).
  static std::shared_ptr<const Tables> builtin();

  /// Reads a replacement set from `directory`, laid out like tables/ (SOURCES.md
  /// and reference/*.tsv at least). Throws TablesError naming the file and line
  /// of the first problem (missing file, bad header, unknown source key, ...).
  static std::shared_ptr<const Tables> load(const std::string &directory);

  /// A new set: this one plus the user's assigned compounds in `tsv_text`
  /// (the reference-record format of tables/FORMAT.md; the four header lines
  /// may be omitted, the column header line may not). User records take
  /// precedence over built-in ones in lookups. `name` labels errors and
  /// provenance. Throws TablesError (bad format) or InputError (a SMILES that
  /// cannot be read), naming the line.
  std::shared_ptr<const Tables> with_user_reference(std::string_view tsv_text,
                                                    std::string_view name = "user") const;

  /// Names the table set that produced a result: "builtin-<hash>" or
  /// "dir-<hash>", plus "+user-<hash>" when user records were added. The hash is
  /// over the text of every table, so equal names mean equal data.
  const std::string &version() const noexcept { return version_; }

  const std::vector<ReferenceCompound> &reference() const noexcept { return reference_; }
  /// Source keys defined in SOURCES.md.
  const std::vector<std::string> &source_keys() const noexcept { return source_keys_; }
  /// Text of a table file by its path relative to the tables folder
  /// ("increments/c13_benzene.tsv"); empty if absent.
  std::string_view file_text(std::string_view path) const noexcept;

  /// Lookup structures built from the reference records (private to the library).
  const detail::ReferenceIndex &reference_index() const noexcept { return *index_; }
  /// The 13C increment tables, parsed once (private to the library).
  const std::shared_ptr<const detail::C13IncrementTables> &c13_increments() const noexcept { return c13_increments_; }
  /// The 1H increment tables, parsed once (private to the library).
  const std::shared_ptr<const detail::H1IncrementTables> &h1_increments() const noexcept { return h1_increments_; }
  /// The coupling tables of couplings/*.tsv, parsed once (private to the library).
  const std::shared_ptr<const detail::CouplingTables> &coupling_tables() const noexcept { return coupling_tables_; }

  Tables(const Tables &) = delete;
  Tables &operator=(const Tables &) = delete;
  ~Tables();

  struct Private;  // construction only through the factories above

 private:
  Tables();
  std::string version_;
  std::uint64_t files_hash_ = 0;  // the hash version_ names (of files_)
  std::vector<ReferenceCompound> reference_;
  std::vector<std::string> source_keys_;
  std::vector<std::pair<std::string, std::string>> files_;
  std::shared_ptr<const detail::C13IncrementTables> c13_increments_;
  std::shared_ptr<const detail::H1IncrementTables> h1_increments_;
  std::shared_ptr<const detail::CouplingTables> coupling_tables_;
  std::shared_ptr<const detail::ReferenceIndex> index_;
  friend struct Private;
};

}  // namespace nmrpred

#endif
