#ifndef NMRPRED_PREDICT_HPP
#define NMRPRED_PREDICT_HPP

/// \file predict.hpp
/// The umbrella C++ API: one call takes a molecule (or structure text) through
/// every stage of the library, and one serializer turns the outcome into the JSON
/// that the command-line program, the C ABI and the Python package all emit.
/// Every call has the form result = f(input, tables, options): the data behind
/// the predictions (Tables, see tables.hpp) is made once by the caller and
/// passed in; the library keeps no global state.
///
/// Thread rule: every function here is a pure function of its arguments and may
/// be called from any number of threads at once, sharing one Tables. Results
/// are plain values that do not refer to the Tables they came from.
///
/// Errors: functions throw types derived from nmrpred::Error (see error.hpp)
/// except where a batch records a failure per record instead (predict_record,
/// predict_all), so one bad record never stops the records after it.

#include <algorithm>
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/couplings.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/solvents.hpp>
#include <nmrpred/spin.hpp>
#include <nmrpred/tables.hpp>
#include <nmrpred/version.hpp>

namespace nmrpred {

/// Settings of one prediction. Plain value; new members are appended with a
/// default that keeps earlier results unchanged.
struct PredictOptions {
  /// Spheres of the HOSE codes, 1..kMaxHoseSpheres (see hose.hpp).
  int hose_spheres = kDefaultHoseSpheres;
  /// Predict as if every reference compound with the query's constitution were
  /// absent from the tables (ShiftOptions::blind): an honest figure for
  /// compounds the tables already hold.
  bool blind = false;
  /// Predict chemical shifts. Off: classes and HOSE codes only (the stages
  /// before shift prediction), for callers that need nothing else and want
  /// the speed; every shift and signal list of Prediction stays empty (both
  /// nuclei, whatever predict_h1 says).
  bool predict_shifts = true;
  /// Solvent of the sample: a name, id or alias of tables/solvents.tsv
  /// (find_solvent(), case-insensitive). It decides whether exchangeable
  /// protons (OH, NH, SH) are seen (they are not in D2O and CD3OD) and which
  /// residual solvent signals a record lists.
  std::string solvent = "CDCl3";
  /// Predict 1H shifts and signals too (only when predict_shifts is on).
  /// Off: 13C only, as before 1H prediction existed.
  bool predict_h1 = true;
  /// Estimate J couplings (predict_couplings() with default CouplingOptions)
  /// and, with predict_h1, simulate the 1H spectrum at field_mhz, which gives
  /// every 1H Signal its multiplicity, j_hz and lines (only when
  /// predict_shifts is on). 13C signals split by fluorine, phosphorus or
  /// deuterium get theirs too.
  bool predict_couplings = true;
  /// Spectrometer field as the 1H frequency, MHz (40..1200): decides which
  /// couplings are strong (second order) and so the multiplets.
  double field_mhz = 400;
  /// Full width at half height of a line, Hz (0 < w <= 100): splittings
  /// smaller than this are not resolved in multiplet labels.
  double line_width_hz = 1.0;
};

/// Throws ArgumentError naming the member if `options` is out of range
/// (field_mhz and line_width_hz also when not finite). Checks
/// what needs no tables (the solvent name is checked by the overload below).
NMRPRED_API void validate(const PredictOptions &options);

/// As above, and also checks the solvent against `tables`: ArgumentError
/// naming the known solvents when it is not one of them, TablesError when the
/// tables have no usable solvents.tsv. Returns the solvent. Thread rule: pure.
NMRPRED_API Solvent validate(const PredictOptions &options, const Tables &tables);

/// One line of a predicted spectrum: the atoms of one chemical equivalence
/// class of one nucleus, which resonate together. Plain value; members are
/// only ever appended.
struct Signal {
  Nucleus nucleus = Nucleus::C13;  ///< nucleus of the atoms
  double ppm = 0;              ///< chemical shift, ppm from TMS (shared by every atom of the class)
  double uncertainty_ppm = 0;  ///< one standard deviation, ppm
  /// Atoms of the class, ascending (for 13C: carbon indices).
  std::vector<std::size_t> atoms;
  /// 13C: protons (hydrogen atoms other than 2H and 3H) bonded to each of the
  /// atoms, equal for all of them: 0 quaternary C, 1 CH, 2 CH2, 3 CH3 (4 for
  /// methane), the number DEPT-style editing tells apart. 0 for other nuclei.
  int attached_h = 0;
  SharedText method;   ///< how the shift was obtained (Shift::method of the atoms)
  /// Nuclei the signal stands for: the number of atoms. For 1H this is the
  /// integral in protons (common practice: a 1H integral is proportional to
  /// the number of protons resonating there).
  int count = 0;
  /// 1H: the protons sit on O, N or S and exchange (Shift::exchangeable).
  bool exchangeable = false;
  /// 1H: false when the protons are exchanged for deuterium by the solvent
  /// (Shift::observed) and so give no signal.
  bool observed = true;
  /// 1H: first-order multiplicity in the trade's letters ("s", "d", "t", "dd",
  /// "td", "m", "br s", ...) of the simulated multiplet (Multiplet::label);
  /// empty when couplings were not predicted and for protons exchanged for
  /// deuterium. 13C (proton-decoupled): the splitting by fluorine,
  /// phosphorus or deuterium ("d" for a C-F carbon), empty for a carbon that
  /// none of them splits or when couplings were not predicted.
  std::string multiplicity;
  /// The resolved coupling constants behind `multiplicity`, Hz, largest
  /// first (one value per splitting step, so a "dt" has two). Empty for a
  /// singlet, an "m" or when couplings were not predicted.
  std::vector<double> j_hz;
  /// 1H: the simulated lines of this signal at PredictOptions::field_mhz, by
  /// increasing ppm, intensities adding up to `count` (Multiplet::lines).
  /// Empty where `multiplicity` is empty. 13C: empty.
  std::vector<SpectralLine> lines;
  friend bool operator==(const Signal &a, const Signal &b) {
    auto same_line = [](const SpectralLine &x, const SpectralLine &y) {
      return x.ppm == y.ppm && x.hz == y.hz && x.intensity == y.intensity;
    };
    return a.nucleus == b.nucleus && a.ppm == b.ppm && a.uncertainty_ppm == b.uncertainty_ppm &&
           a.atoms == b.atoms && a.attached_h == b.attached_h && a.method == b.method && a.count == b.count &&
           a.exchangeable == b.exchangeable && a.observed == b.observed && a.multiplicity == b.multiplicity &&
           a.j_hz == b.j_hz && a.lines.size() == b.lines.size() &&
           std::equal(a.lines.begin(), a.lines.end(), b.lines.begin(), same_line);
  }
};

/// Groups per-atom shifts of one nucleus into signals, one per chemical class
/// of `classes`, sorted by decreasing shift (spectra are read downfield first;
/// ties by lowest atom index). `shifts` must come from the same molecule and
/// classes (for example predict_c13); equivalent atoms carry equal shifts there,
/// so each signal takes the values of its lowest-indexed atom (including
/// Shift::exchangeable and Shift::observed). Signals of unobserved protons are
/// included; callers split them off (Prediction keeps them apart). Throws
/// ArgumentError if a shift names an atom outside `molecule` or `classes`
/// belongs to another molecule. Thread rule: pure.
NMRPRED_API std::vector<Signal> group_signals(const Molecule &molecule, const AtomClasses &classes,
                                              const std::vector<Shift> &shifts);

/// Everything the library derives for one molecule. Plain value; per-atom vectors
/// are indexed like molecule.atoms() (heavy atoms first, then hydrogens).
struct Prediction {
  Molecule molecule;
  AtomClasses classes;
  /// Per atom: HOSE code with PredictOptions::hose_spheres spheres.
  std::vector<std::string> hose;
  /// 13C shift of every carbon, ascending by atom (predict_c13); empty when
  /// PredictOptions::predict_shifts is off. Use shift() to look up one atom.
  std::vector<Shift> c13;
  /// The 13C signals (group_signals of c13), by decreasing shift; empty when
  /// shifts were not predicted.
  std::vector<Signal> c13_signals;
  /// 1H shift of every proton (hydrogen with isotope 0 or 1; deuterium and
  /// tritium have none), ascending by atom (predict_h1); empty when
  /// predict_shifts or predict_h1 is off. Exchanged protons are included,
  /// with Shift::observed false.
  std::vector<Shift> h1;
  /// The 1H signals a spectrum in the solvent shows, one per chemical class of
  /// observed protons, by decreasing shift; Signal::count is the integral.
  /// Diastereotopic protons are separate classes and so separate signals, even
  /// where their predicted values coincide.
  std::vector<Signal> h1_signals;
  /// Signals of protons the solvent exchanges for deuterium (OH, NH, SH in
  /// D2O or CD3OD): predicted but not seen, kept apart so that the integrals
  /// of h1_signals add up to what the spectrum shows. Empty in other solvents.
  std::vector<Signal> h1_exchanged_signals;
  /// The solvent of PredictOptions::solvent as the tables describe it
  /// (residual and water signals, for drawing or setting them aside).
  Solvent solvent;
  /// Tables::version() of the tables that produced this prediction.
  std::string tables_version;
  /// The options that produced this prediction.
  PredictOptions options;
  /// Remarks from reading and from every stage (unspecified stereo given a
  /// canonical configuration, search limits reached, atoms only the shift
  /// engine's last resort could handle, ...). Never errors.
  std::vector<std::string> warnings;
  /// Estimated couplings (predict_couplings(), sorted by atoms) when
  /// PredictOptions::predict_couplings and predict_shifts are on; else empty.
  std::vector<Coupling> couplings;
  /// The simulated 1H spectrum (simulate(*this, couplings, Nucleus::H1) at
  /// PredictOptions::field_mhz and line_width_hz, with
  /// SimulationOptions::max_block_size 64 to bound the cost: larger strongly
  /// coupled clusters, as in long alkyl chains, are split with a warning;
  /// call simulate() for the full treatment) when couplings and 1H
  /// shifts were predicted and the solvent leaves at least one proton
  /// observed; its multiplets are those copied into h1_signals. Absent
  /// otherwise, or when the coupling or simulation stage failed (then a
  /// warning says why and the shifts are still given).
  std::optional<Simulation> h1_simulation;

  /// The predicted shift of `atom` for `nucleus`, or null if there is none (the
  /// atom is not of that nucleus's element, is deuterium or tritium, or the
  /// nucleus was not predicted). Borrowed: valid while this Prediction is
  /// unchanged. Never throws.
  NMRPRED_API const Shift *shift(std::size_t atom, Nucleus nucleus) const noexcept;
  /// The signals of `nucleus` a spectrum shows (c13_signals, h1_signals;
  /// empty if the nucleus was not predicted). Never throws.
  NMRPRED_API const std::vector<Signal> &signals(Nucleus nucleus) const noexcept;
};

/// Runs every stage on `molecule` with the data of `tables`. Throws
/// ArgumentError for bad options (an unknown solvent among them), TablesError
/// when the tables lack a usable solvents.tsv, and whatever the stages throw (InputError for
/// a graph they cannot handle). The result copies what it needs from `tables`
/// (version, reference ids), so it may outlive them.
NMRPRED_API Prediction predict(const Molecule &molecule, const Tables &tables, const PredictOptions &options = {});
/// Same as above; takes over `molecule` instead of copying it.
NMRPRED_API Prediction predict(Molecule &&molecule, const Tables &tables, const PredictOptions &options = {});

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

/// Runs every stage on one record from MoleculeReader or read_records. A
/// failure of the record, whether from reading or a later stage, becomes its
/// status and message. A failure that is a library bug (any other
/// std::exception) is recorded as Status::Internal so the batch goes on.
/// Throws only what concerns the whole call, checked before anything else:
/// ArgumentError for bad `options` (an unknown solvent among them),
/// TablesError when the tables lack a usable solvents.tsv; and std::bad_alloc
/// when memory runs out.
NMRPRED_API RecordPrediction predict_record(ReadRecord record, const Tables &tables,
                                            const PredictOptions &options = {});

/// Reads every record of `text` (in `format`; Format::Auto recognises it) and
/// predicts each one with the data of `tables`. Records that fail keep their
/// place in the output with their status and message. Throws ArgumentError for
/// bad options and TablesError as predict_record does; an input with no record at all gives an empty vector (callers
/// decide whether that is an error).
NMRPRED_API std::vector<RecordPrediction> predict_all(std::string_view text, Format format, const Tables &tables,
                                                      const PredictOptions &options = {});

/// Formatting of the JSON text.
struct JsonOptions {
  /// Spaces per nesting level; negative prints everything on one line (JSON Lines).
  int indent = -1;
};

/// Serializes one record. A successful record is
///   {"record", "title", "tables_version",
///    "atoms": [{"index", "element", "isotope", "charge", "attached_to",
///               "class", "topological_class", "hose",
///               "shift", "shift_uncertainty", "shift_method", "shift_references",
///               "exchangeable", "observed"}, ...],
///    "signals": {"13C": [{"shift", "atoms", "attached_h", "shift_uncertainty",
///                         "shift_method"}, ...],
///                "1H": [{"shift", "atoms", "count", "shift_uncertainty",
///                        "exchangeable", "observed", "shift_method"}, ...],
///                "1H_exchanged": [same keys as "1H"]},
///    "solvent": {"id", "name", "residual_1h": [ppm, ...], "residual_13c": [ppm, ...],
///                "water_1h": ppm},
///    "warnings",
///    "counts": {"atoms", "heavy_atoms", "classes", "topological_classes"}}
/// with "isotope" the mass number or null (natural abundance), "attached_to" the
/// heavy atom a hydrogen is bonded to or null. The four "shift*" keys (ppm from
/// TMS, one standard deviation in ppm, the method in words, ids of the
/// reference compounds behind the value) appear only on atoms that have a
/// predicted shift: carbons (13C) and protons (1H; not 2H or 3H) when that
/// nucleus was predicted. Protons with a shift also carry "exchangeable"
/// (bonded to O, N or S) and "observed" (false when the solvent exchanges them
/// for deuterium). "signals" holds one list per predicted nucleus (none when
/// shifts were not predicted), each sorted by decreasing shift (see Signal).
/// "1H" lists what a spectrum in the solvent shows, one entry per chemical
/// class of protons, "count" being the integral in protons; protons exchanged
/// for deuterium (OH, NH, SH in D2O or CD3OD) are left out of "1H" and listed
/// under "1H_exchanged" (present, maybe empty, whenever "1H" is), so that the
/// counts of "1H" add up to the integrals a spectrum shows. Deuterated
/// positions give no entry at all. "solvent" describes PredictOptions::solvent:
/// its residual 1H and 13C signals and dissolved water (ppm from TMS), so that
/// later stages can draw or ignore them. When couplings were predicted
/// (PredictOptions::predict_couplings and predict_shifts), every signal also
/// has "multiplicity" (Signal::multiplicity; "" for an unsplit 13C signal and
/// for exchanged protons) and "j_hz" (Hz, largest first), every 1H and
/// 1H_exchanged signal "lines": [{"ppm", "hz", "intensity"}, ...], and the record
/// ends with "field_mhz" and "line_width_hz" (the options of the simulation)
/// and "couplings": [{"atoms": [a, b], "bonds", "j_hz", "uncertainty_hz",
/// "rule", "source"}, ...] (Prediction::couplings; Hz). A failed record is
///   {"record", "error": {"code", "name", "message"}}
/// with "code" the C status number and "name" its NMR_ERR_* constant. Keys are
/// only ever added. Text that is not valid UTF-8 (titles) has the bad bytes
/// replaced by U+FFFD. Throws only std::bad_alloc.
NMRPRED_API std::string to_json(const RecordPrediction &record, const JsonOptions &options = {});

/// Serializes records as a JSON array of the objects above.
NMRPRED_API std::string to_json(const std::vector<RecordPrediction> &records, const JsonOptions &options = {});

/// Serializes one reference compound of Tables::reference() as
///   {"id", "smiles", "solvent", "source", "file", "user",
///    "c13": [{"atoms", "ppm"}, ...], "h1": [{"atoms", "ppm"}, ...]}
/// where "atoms" are heavy-atom indices in the record's SMILES order and "ppm"
/// is a list of one value (it applies to every listed atom) or two (a
/// diastereotopic proton pair on one atom, or an unassigned pair of two atoms;
/// see tables/FORMAT.md). Throws only std::bad_alloc.
NMRPRED_API std::string to_json(const ReferenceCompound &compound, const JsonOptions &options = {});

/// Serializes one solvent of solvents(tables) as
///   {"id", "name", "residual_1h": [ppm, ...], "residual_13c": [ppm, ...], "water_1h",
///    "aliases", "exchanges_labile_protons", "source",
///    "residual_1h_detail": [{"shift", "multiplicity", "coupling_hz"}, ...],
///    "residual_13c_detail": [same]}
/// with shifts in ppm from TMS and "coupling_hz" null where the table gives
/// none. The first keys mean what they mean in a record's "solvent". Throws
/// only std::bad_alloc.
NMRPRED_API std::string to_json(const Solvent &solvent, const JsonOptions &options = {});

/// Serializes a simulation (simulate()) as
///   {"observe", "mhz", "observe_mhz",
///    "lines": [{"ppm", "hz", "intensity"}, ...],
///    "multiplets": [{"ppm", "ppm_low", "ppm_high", "label", "j_hz", "integral",
///                    "atoms", "lines"}, ...],
///    "warnings": [...]}
/// with "observe" the observed isotope ("1H", "13C", ...), "mhz" the field as
/// the 1H frequency and "observe_mhz" that of the observed isotope, both MHz;
/// "atoms" of a multiplet are the indices Multiplet::atoms holds (atoms of a
/// molecule, spins of a spin system given directly). The layout of
/// `nmrpred simulate` and nmr_spectrum_to_json(). Throws only std::bad_alloc.
NMRPRED_API std::string to_json(const Simulation &simulation, const JsonOptions &options = {});

/// Name of the C constant for a status ("NMR_OK", "NMR_ERR_INPUT", ...), as used
/// in the JSON "name" key. Static text; never null.
NMRPRED_API const char *status_constant_name(Status status) noexcept;

}  // namespace nmrpred

#endif
