#ifndef NMRPRED_PREDICT_HPP
#define NMRPRED_PREDICT_HPP

/// \file predict.hpp
/// The umbrella C++ API: one call takes a molecule (or structure text) through
/// every stage of the library, and one serializer turns the outcome into the JSON
/// that the command-line program, the C ABI and the Python package all emit.
///
/// Thread rule: every function here is a pure function of its arguments and may
/// be called from any number of threads at once. Results are plain values.
///
/// Errors: functions throw types derived from nmrpred::Error (see error.hpp)
/// except where a batch records a failure per record instead (predict_record,
/// predict_all), so one bad record never stops the records after it.

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/version.hpp>

namespace nmrpred {

/// Settings of one prediction. Plain value; new members are appended with a
/// default that keeps earlier results unchanged.
struct PredictOptions {
  /// Spheres of the HOSE codes, 1..kMaxHoseSpheres (see hose.hpp).
  int hose_spheres = kDefaultHoseSpheres;
};

/// Throws ArgumentError naming the member if `options` is out of range.
NMRPRED_API void validate(const PredictOptions &options);

/// Everything the library derives for one molecule. Plain value; per-atom vectors
/// are indexed like molecule.atoms() (heavy atoms first, then hydrogens).
struct Prediction {
  Molecule molecule;
  AtomClasses classes;
  /// Per atom: HOSE code with PredictOptions::hose_spheres spheres.
  std::vector<std::string> hose;
  /// Remarks from reading and from every stage (unspecified stereo given a
  /// canonical configuration, search limits reached, ...). Never errors.
  std::vector<std::string> warnings;
};

/// Runs every stage on `molecule`. Throws ArgumentError for bad options and
/// whatever the stages throw (InputError for a graph they cannot handle).
NMRPRED_API Prediction predict(const Molecule &molecule, const PredictOptions &options = {});
/// Same as above; takes over `molecule` instead of copying it.
NMRPRED_API Prediction predict(Molecule &&molecule, const PredictOptions &options = {});

/// Outcome of one record of a batch: a prediction or the reason it failed.
struct RecordPrediction {
  std::size_t record = 0;     ///< 0-based position of the record in the input
  std::string title;          ///< SMILES title / MOL name line, may be empty
  Status status = Status::Ok; ///< Ok, or the status of the failure
  std::string error;          ///< message when status != Ok, naming the problem
  /// Set exactly when status == Ok. Its warnings include the reader's.
  std::optional<Prediction> prediction;
  /// Reader warnings of a failed record (a successful record keeps them in
  /// prediction->warnings).
  std::vector<std::string> failure_warnings;

  bool ok() const noexcept { return status == Status::Ok; }
  /// All warnings of the record, wherever they are kept.
  const std::vector<std::string> &warnings() const noexcept {
    return prediction ? prediction->warnings : failure_warnings;
  }
};

/// Runs every stage on one record from MoleculeReader or read_records. Never
/// throws nmrpred::Error: a failure of the record, whether from reading or a
/// later stage, becomes its status and message. A failure that is a library bug
/// (any other std::exception) is recorded as Status::Internal so the batch goes
/// on. Throws ArgumentError only for bad `options` (checked before anything
/// else) and std::bad_alloc when memory runs out.
NMRPRED_API RecordPrediction predict_record(ReadRecord record, const PredictOptions &options = {});

/// Reads every record of `text` and predicts each one. Records that fail keep
/// their place in the output with their status and message. Throws
/// ArgumentError for bad options; an input with no record at all gives an empty
/// vector (callers decide whether that is an error).
NMRPRED_API std::vector<RecordPrediction> predict_all(std::string_view text, Format format = Format::Auto,
                                                      const PredictOptions &options = {});

/// Formatting of the JSON text.
struct JsonOptions {
  /// Spaces per nesting level; negative prints everything on one line (JSON Lines).
  int indent = -1;
};

/// Serializes one record. A successful record is
///   {"record", "title", "atoms": [{"index", "element", "isotope", "charge",
///    "attached_to", "class", "topological_class", "hose"}, ...], "warnings",
///    "counts": {"atoms", "heavy_atoms", "classes", "topological_classes"}}
/// with "isotope" the mass number or null (natural abundance), "attached_to" the
/// heavy atom a hydrogen is bonded to or null. A failed record is
///   {"record", "error": {"code", "name", "message"}}
/// with "code" the C status number and "name" its NMR_ERR_* constant. Keys are
/// only ever added. Text that is not valid UTF-8 (titles) has the bad bytes
/// replaced by U+FFFD. Throws only std::bad_alloc.
NMRPRED_API std::string to_json(const RecordPrediction &record, const JsonOptions &options = {});

/// Serializes records as a JSON array of the objects above.
NMRPRED_API std::string to_json(const std::vector<RecordPrediction> &records, const JsonOptions &options = {});

/// Name of the C constant for a status ("NMR_OK", "NMR_ERR_INPUT", ...), as used
/// in the JSON "name" key. Static text; never null.
NMRPRED_API const char *status_constant_name(Status status) noexcept;

}  // namespace nmrpred

#endif
