/*
 * nmrpred.h - the C interface of libnmrpred (libnmrpred.so).
 *
 * Pure C99; also compiles as C++. This header is the whole public C API: what it
 * does not declare is not public. It stays source- and binary-compatible for a
 * whole major version (the shared object's SOVERSION is the major version).
 *
 * Conventions
 * - Functions that can fail return int: NMR_OK (0) or a positive NMR_ERR_* code.
 *   Codes are only ever appended; treat any unknown non-zero code as a failure.
 * - Newly created objects come back through a first argument `**out`; you own
 *   them and release each with its one matching nmr_<type>_free. Every _free
 *   accepts NULL. Never release library memory with free().
 * - A `const char *` that a function returns is borrowed: it lives as long as
 *   the handle it came from (static text where noted) and must not be freed.
 * - Error text lives on the context: after a call on a context fails,
 *   nmr_context_last_error() says why. Result accessors take no context; they
 *   report failure only through their status code (see nmr_status_string()),
 *   and leave their outputs untouched when they fail.
 * - Atom and record indices are 0-based. Atom order within a record: heavy atoms
 *   first, in input order, then every hydrogen grouped by the heavy atom it is
 *   bonded to (explicit hydrogens before implicit ones added by the reader).
 * - Nothing escapes: no C++ exception leaves the library, and it never calls
 *   abort()/exit() or writes to stdout/stderr.
 *
 * Threads
 * - Contexts are independent. Use each context from one thread at a time (one
 *   context per thread, or your own lock around a shared one); different
 *   contexts may be used from different threads at the same time.
 * - A result is immutable once nmr_predict() returns it: any number of threads
 *   may read it at once, with or without the context that made it, until it is
 *   freed. Results outlive their context.
 * - Functions that take neither a context nor a result (versions, status text)
 *   may be called from any thread at any time.
 *
 * Typical use
 *
 *   nmr_context *ctx = NULL;
 *   if (nmr_context_new(&ctx, NULL) != NMR_OK) { report(nmr_context_last_error(ctx)); }
 *   nmr_result *res = NULL;
 *   if (nmr_predict(&res, ctx, NULL, "CCO ethanol") != NMR_OK) {
 *     report(nmr_context_last_error(ctx));
 *   } else if (nmr_result_record_status(res, 0) != NMR_OK) {
 *     report(nmr_result_record_error(res, 0));
 *   } else {
 *     size_t n = nmr_result_atom_count(res, 0);  ... per-atom accessors ...
 *     size_t k = nmr_result_signal_count(res, 0, NMR_NUCLEUS_13C);  ... signals ...
 *   }
 *   nmr_result_free(res);
 *   nmr_context_free(ctx);
 */
#ifndef NMRPRED_H
#define NMRPRED_H

#include <stddef.h>

#if defined(_WIN32) && !defined(NMR_STATIC)
#  ifdef NMR_BUILDING
#    define NMR_API __declspec(dllexport)
#  else
#    define NMR_API __declspec(dllimport)
#  endif
#elif defined(__GNUC__)
#  define NMR_API __attribute__((visibility("default")))
#else
#  define NMR_API
#endif

#ifdef __cplusplus
extern "C" {
#endif

/* ---------------------------------------------------------------- versions */

/** Version of this header. Compare with nmr_version_number() at start-up to
 *  catch a program running against a library other than the one it was built
 *  for; a different NMR_VERSION_MAJOR means an incompatible library. */
#define NMR_VERSION_MAJOR 0
#define NMR_VERSION_MINOR 1
#define NMR_VERSION_PATCH 0
#define NMR_VERSION_NUMBER (NMR_VERSION_MAJOR * 10000 + NMR_VERSION_MINOR * 100 + NMR_VERSION_PATCH)

/** Version of the loaded library, encoded like NMR_VERSION_NUMBER. Never fails. */
NMR_API int nmr_version_number(void);

/** Version of the loaded library as "MAJOR.MINOR.PATCH". Static text; never NULL. */
NMR_API const char *nmr_version_string(void);

/* ------------------------------------------------------------ status codes */

/** Status codes. Append only: never renumbered or reused. */
enum {
  NMR_OK = 0,
  NMR_ERR_ARGUMENT = 1,    /**< an argument is invalid: NULL, out of range, unknown name */
  NMR_ERR_INPUT = 2,       /**< the structure text cannot be used (syntax, unknown element, ...) */
  NMR_ERR_UNSUPPORTED = 3, /**< a valid request the library does not handle (unknown option key) */
  NMR_ERR_TABLES = 4,      /**< a data table is missing, malformed or cites an unknown source */
  NMR_ERR_NOMEM = 5,       /**< memory ran out */
  NMR_ERR_INTERNAL = 6     /**< a bug in the library; please report it with the message */
};

/** Short English description of a status code ("ok", "unusable input", ...);
 *  "unknown status" for codes this version does not know. Static text; never
 *  NULL. Needs no context. */
NMR_API const char *nmr_status_string(int status);

/* ----------------------------------------------------------------- options */

/** Option keys. Append only. Keys 1 and 2 (field in MHz, line width in Hz)
 *  are among the spectrum options further down. Numeric options are set with
 *  nmr_context_set_option_double(), text options (NMR_OPT_SOLVENT) with
 *  nmr_context_set_option_string(); a key given to the wrong one is
 *  NMR_ERR_UNSUPPORTED. */
enum {
  /** Spheres of the HOSE codes: a whole number from 1 to 6. Default 4. */
  NMR_OPT_HOSE_SPHERES = 3,
  /** 1: predict shifts as if every reference compound with the same
   *  constitution as the query were absent from the tables (an honest figure
   *  for compounds the tables hold). 0 (default): use every record. */
  NMR_OPT_BLIND = 4,
  /** 1 (default): predict chemical shifts. 0: classes and HOSE codes only,
   *  which is faster; shift and signal accessors then find nothing (neither
   *  nucleus, whatever NMR_OPT_PREDICT_H1 says). */
  NMR_OPT_PREDICT_SHIFTS = 5,
  /** 1 (default): predict 1H shifts and signals as well as 13C (when
   *  NMR_OPT_PREDICT_SHIFTS is on). 0: 13C only. */
  NMR_OPT_PREDICT_H1 = 6,
  /** Text: solvent of the sample, a name or alias of the tables' solvent list
   *  (case-insensitive): "CDCl3" (default), "DMSO-d6", "CD3OD", "D2O",
   *  "acetone-d6", "C6D6", ... In D2O and CD3OD, protons on O, N and S
   *  exchange for deuterium and give no 1H signal. */
  NMR_OPT_SOLVENT = 7
};

/** Spectrum and coupling options (append only). Numeric; they apply to later
 *  nmr_predict(), nmr_result_simulate() and nmr_simulate_json() calls, and the
 *  sampling ones (points, ppm range, line shape) are copied into each
 *  nmr_spectrum when it is made. */
enum {
  /** Spectrometer field as the 1H frequency, MHz (40 .. 1200). Default 400.
   *  Other nuclei resonate at this times their frequency ratio (13C: about
   *  0.2515). A spin-system JSON's own "mhz" takes precedence over it. */
  NMR_OPT_FIELD_MHZ = 1,
  /** Full width at half height of a line, Hz (0 < w <= 100). Default 1.
   *  Splittings narrower than the width are not resolved in multiplet labels
   *  (nmr_predict() multiplicities, simulated multiplets). */
  NMR_OPT_LINE_WIDTH_HZ = 2,
  /** 1 (default): estimate J couplings with the shifts and simulate the 1H
   *  spectrum at NMR_OPT_FIELD_MHZ, so that signals get a multiplicity and
   *  nmr_result_coupling_count() finds the couplings. 0: none (faster; 1H
   *  spectra of records are then singlets). */
  NMR_OPT_PREDICT_COUPLINGS = 8,
  /** Samples of a sampled spectrum's axis, both ends included (16 ..
   *  4194304), or 0 (default): enough for at least 4 samples per line width. */
  NMR_OPT_POINTS = 9,
  /** Low and high ends of the sampled axis, ppm. NaN (default) picks the
   *  usual range of the nucleus (1H: -0.5 .. 12; 13C: -5 .. 225; other
   *  nuclei: the lines' span widened by 10 % and at least 1 ppm each side).
   *  When both are set, low must be below high (checked when the spectrum is
   *  made). */
  NMR_OPT_PPM_LOW = 10,
  NMR_OPT_PPM_HIGH = 11,
  /** Line shape of sampled spectra: 1 Lorentzian (default), 2 Gaussian of the
   *  same width. */
  NMR_OPT_LINE_SHAPE = 12
};

/** Values of NMR_OPT_LINE_SHAPE. */
enum { NMR_LINE_LORENTZIAN = 1, NMR_LINE_GAUSSIAN = 2 };

/** Nuclei, by mass number. */
enum { NMR_NUCLEUS_1H = 1, NMR_NUCLEUS_13C = 13 };

/* ----------------------------------------------------------------- context */

/** Settings, data tables and the last error message. One thread at a time.
 *  The tables are read when the context is created (tens of milliseconds:
 *  create a context once and reuse it) and then only read, except that
 *  nmr_context_add_reference() replaces them with a larger set. */
typedef struct nmr_context nmr_context;

/** Predictions for every record of one input. Immutable; any thread may read it. */
typedef struct nmr_result nmr_result;

/** Creates a context with default options and its tables.
 *  tables_dir: NULL selects the tables built into the library; otherwise a
 *  folder laid out like the project's tables/ folder (at least SOURCES.md
 *  and one .tsv file in its reference/ subfolder; files it lacks are absent), read
 *  completely before this returns. UTF-8 path.
 *  On failure other than NMR_ERR_NOMEM, *out still receives a context so that
 *  nmr_context_last_error() can tell why; free it either way. Such a context
 *  has no tables: nmr_predict() and nmr_context_add_reference() on it fail
 *  with NMR_ERR_TABLES.
 *  Errors: NMR_ERR_ARGUMENT (out is NULL), NMR_ERR_TABLES (a table file is
 *  missing or malformed; the message names the file and line), NMR_ERR_NOMEM
 *  (then *out is NULL). */
NMR_API int nmr_context_new(nmr_context **out, const char *tables_dir);

/** Frees a context. NULL is fine. Results made with it stay valid. */
NMR_API void nmr_context_free(nmr_context *ctx);

/** Message describing the latest failure on ctx: what went wrong and, where it
 *  applies, which argument, record or atom. "" if no call on ctx has failed yet
 *  or the latest call succeeded. Owned by ctx; valid until the next call on ctx.
 *  For ctx == NULL returns a static message saying so; never NULL. */
NMR_API const char *nmr_context_last_error(const nmr_context *ctx);

/** Name and version of the table set behind every result of this context (for
 *  reproducibility: store it with results): "builtin-<hash>" or "dir-<hash>",
 *  plus "+user-<hash>" for each nmr_context_add_reference(); equal names mean
 *  equal data. Owned by ctx; valid until ctx is freed or its tables change
 *  (a successful nmr_context_add_reference()). Never NULL; "" for ctx == NULL
 *  or a context whose creation failed. */
NMR_API const char *nmr_context_tables_version(const nmr_context *ctx);

/** Adds the user's own assigned compounds to the context's tables; later
 *  predictions use them before the built-in records (with ids shown among a
 *  shift's references). tsv_text: NUL-terminated UTF-8 text in the reference
 *  record format of the project's tables/FORMAT.md (column header line
 *  "id smiles solvent c13 h1 source", tab separated; the four "# " header
 *  lines may be left out). Ids must not be in use already. All or nothing: on
 *  failure the tables stay as they were. Results made earlier are unaffected.
 *  Errors: NMR_ERR_ARGUMENT (ctx or tsv_text NULL), NMR_ERR_TABLES (bad
 *  format, no records, id in use, a SMILES that cannot be read, or a context
 *  without tables; the message names the line or record), NMR_ERR_INPUT,
 *  NMR_ERR_NOMEM. */
NMR_API int nmr_context_add_reference(nmr_context *ctx, const char *tsv_text);

/** Sets one option (see NMR_OPT_*). Applies to later nmr_predict() calls.
 *  Switches (NMR_OPT_BLIND, NMR_OPT_PREDICT_SHIFTS) take 0 or 1.
 *  Errors: NMR_ERR_ARGUMENT (ctx NULL, or value out of range / not a whole
 *  number where one is needed; the option keeps its previous value),
 *  NMR_ERR_UNSUPPORTED (unknown key). */
NMR_API int nmr_context_set_option_double(nmr_context *ctx, int option, double value);

/** Reads the current value of one option into *value_out.
 *  Errors: NMR_ERR_ARGUMENT (ctx or value_out NULL), NMR_ERR_UNSUPPORTED (unknown key). */
NMR_API int nmr_context_get_option_double(nmr_context *ctx, int option, double *value_out);

/** Sets one text option (NMR_OPT_SOLVENT). Applies to later nmr_predict() calls.
 *  value: NUL-terminated UTF-8. A solvent is checked against the context's
 *  tables at once and stored under its usual name (nmr_context_get_option_string
 *  then gives "DMSO-d6" for "dmso").
 *  Errors: NMR_ERR_ARGUMENT (ctx or value NULL, or an unknown solvent: the
 *  message names the known ones; the option keeps its previous value),
 *  NMR_ERR_UNSUPPORTED (unknown key or a numeric key), NMR_ERR_TABLES (the
 *  context has no tables, or they lack a usable solvent list). */
NMR_API int nmr_context_set_option_string(nmr_context *ctx, int option, const char *value);

/** Reads the current value of one text option: *value_out receives text owned
 *  by ctx, valid until the next call on ctx.
 *  Errors: NMR_ERR_ARGUMENT (ctx or value_out NULL), NMR_ERR_UNSUPPORTED
 *  (unknown key or a numeric key). */
NMR_API int nmr_context_get_option_string(nmr_context *ctx, int option, const char **value_out);

/* -------------------------------------------------------------- prediction */

/** Reads every record of `text` and predicts each one with the context's
 *  options and tables.
 *  format: "smiles" (one molecule per line, optional title after whitespace),
 *  "mol", "sdf", "inchi" (one per line), or NULL / "auto" to recognise the
 *  format from the content. Names are case-insensitive.
 *  text: NUL-terminated structure text, UTF-8 or ASCII.
 *  On NMR_OK, *out receives a result holding one entry per record, in input
 *  order. A record that cannot be read or predicted does not stop the others:
 *  it keeps its place with its own status and message (see
 *  nmr_result_record_status), and nmr_predict still returns NMR_OK.
 *  Errors (then *out is set to NULL, if out is not NULL): NMR_ERR_ARGUMENT (out,
 *  ctx or text NULL, unknown format name), NMR_ERR_INPUT (the text holds no
 *  record at all), NMR_ERR_TABLES (the context has no tables because its
 *  creation failed, or its tables folder has no usable solvent list),
 *  NMR_ERR_NOMEM, NMR_ERR_INTERNAL. */
NMR_API int nmr_predict(nmr_result **out, nmr_context *ctx, const char *format, const char *text);

/** Frees a result and every string borrowed from it. NULL is fine. */
NMR_API void nmr_result_free(nmr_result *res);

/* --------------------------------------------------------- result: records */

/** Tables version (see nmr_context_tables_version()) of the tables that made
 *  this result. Borrowed from res; never NULL; "" for NULL. */
NMR_API const char *nmr_result_tables_version(const nmr_result *res);

/** Number of records in the result; 0 for NULL. */
NMR_API size_t nmr_result_record_count(const nmr_result *res);

/** Number of records whose status is not NMR_OK; 0 for NULL. */
NMR_API size_t nmr_result_failed_count(const nmr_result *res);

/** Status of one record: NMR_OK if it was predicted, otherwise why it failed
 *  (usually NMR_ERR_INPUT). NMR_ERR_ARGUMENT if res is NULL or record is out of
 *  range (not a record status then, as nmr_result_record_error() tells). */
NMR_API int nmr_result_record_status(const nmr_result *res, size_t record);

/** Message of a failed record, naming the problem; "" for a record that
 *  succeeded. For NULL res or an index out of range, a static message saying so.
 *  Borrowed from res; never NULL. */
NMR_API const char *nmr_result_record_error(const nmr_result *res, size_t record);

/** Title of a record (SMILES text after the structure, MOL name line); "" if
 *  none, or for NULL res / index out of range. Borrowed from res; never NULL. */
NMR_API const char *nmr_result_record_title(const nmr_result *res, size_t record);

/** Number of warnings of a record (remarks, never errors); 0 for NULL res or an
 *  index out of range. */
NMR_API size_t nmr_result_warning_count(const nmr_result *res, size_t record);

/** One warning of a record, or NULL if res is NULL or an index is out of
 *  range. Borrowed from res. */
NMR_API const char *nmr_result_warning(const nmr_result *res, size_t record, size_t warning);

/** Number of atoms of a record, hydrogens included; 0 for a failed record, NULL
 *  res or an index out of range. */
NMR_API size_t nmr_result_atom_count(const nmr_result *res, size_t record);

/** Number of atoms that are not hydrogen; they are atoms 0 .. count-1. 0 for a
 *  failed record, NULL res or an index out of range. */
NMR_API size_t nmr_result_heavy_atom_count(const nmr_result *res, size_t record);

/** Number of chemical (stereo-aware) equivalence classes; class ids run
 *  0 .. count-1. 0 for a failed record, NULL res or an index out of range. */
NMR_API size_t nmr_result_class_count(const nmr_result *res, size_t record);

/** Number of topological equivalence classes (graph symmetry only). 0 for a
 *  failed record, NULL res or an index out of range. */
NMR_API size_t nmr_result_topological_class_count(const nmr_result *res, size_t record);

/* ----------------------------------------------------------- result: atoms */
/* Every per-atom accessor returns NMR_OK, or NMR_ERR_ARGUMENT if res or an
 * output pointer is NULL, the record is out of range or failed, or the atom is
 * out of range; outputs are left untouched on failure. */

/** Element of an atom: atomic number (1..118) and symbol ("C", "Cl"; static
 *  text). Either output may be NULL if not wanted. */
NMR_API int nmr_result_atom_element(const nmr_result *res, size_t record, size_t atom,
                                    int *atomic_number_out, const char **symbol_out);

/** Isotope of an atom as its mass number (2 for deuterium, 13 for carbon-13),
 *  or 0 when the input gave none (natural abundance). */
NMR_API int nmr_result_atom_isotope(const nmr_result *res, size_t record, size_t atom, int *mass_number_out);

/** Formal charge of an atom in units of e. */
NMR_API int nmr_result_atom_charge(const nmr_result *res, size_t record, size_t atom, int *charge_out);

/** For a hydrogen: index of the heavy atom it is bonded to. -1 for a heavy atom
 *  and for a hydrogen bonded to no heavy atom (H2, a hydride ion). */
NMR_API int nmr_result_atom_attached_to(const nmr_result *res, size_t record, size_t atom,
                                        ptrdiff_t *heavy_atom_out);

/** Chemical equivalence class of an atom (0 .. nmr_result_class_count - 1).
 *  Atoms exchanged by a symmetry of the molecule (homotopic, enantiotopic) share
 *  a class; diastereotopic atoms do not. Ids are numbered in order of the lowest
 *  atom index of each class. */
NMR_API int nmr_result_atom_class(const nmr_result *res, size_t record, size_t atom, size_t *class_out);

/** Topological equivalence class of an atom (graph symmetry, stereo ignored);
 *  numbered like nmr_result_atom_class(). */
NMR_API int nmr_result_atom_topological_class(const nmr_result *res, size_t record, size_t atom,
                                              size_t *class_out);

/** HOSE code of an atom with the context's NMR_OPT_HOSE_SPHERES spheres at the
 *  time of nmr_predict(). Borrowed from res (NUL-terminated). */
NMR_API int nmr_result_atom_hose(const nmr_result *res, size_t record, size_t atom, const char **hose_out);

/* Predicted shifts. When NMR_OPT_PREDICT_SHIFTS was on, carbons have a 13C
 * shift and protons (hydrogens other than 2H and 3H) a 1H shift unless
 * NMR_OPT_PREDICT_H1 was off; other atoms have none. Equivalent atoms (one
 * class) always carry equal values. */

/** Predicted chemical shift of an atom: *ppm_out in ppm from TMS and
 *  *uncertainty_ppm_out, one standard deviation in ppm. Both receive NaN
 *  (NMR_OK still) when the atom has no predicted shift; test with isnan().
 *  Either output may be NULL if not wanted. */
NMR_API int nmr_result_atom_shift(const nmr_result *res, size_t record, size_t atom, double *ppm_out,
                                  double *uncertainty_ppm_out);

/** How an atom's shift was obtained, in words (source, HOSE sphere and number
 *  of compounds, or rules used); "" when the atom has no shift. Borrowed from
 *  res (NUL-terminated). */
NMR_API int nmr_result_atom_shift_method(const nmr_result *res, size_t record, size_t atom,
                                         const char **method_out);

/** Number of reference compounds behind an atom's shift (0 when none, e.g. a
 *  value from increment rules, or no shift). */
NMR_API int nmr_result_atom_shift_reference_count(const nmr_result *res, size_t record, size_t atom,
                                                  size_t *count_out);

/** Id of reference compound `i` (0 .. count-1) behind an atom's shift, as in
 *  the tables (user records carry the user's ids). Borrowed from res.
 *  NMR_ERR_ARGUMENT also when i is not below the count. */
NMR_API int nmr_result_atom_shift_reference(const nmr_result *res, size_t record, size_t atom, size_t i,
                                            const char **id_out);

/** For a proton with a predicted 1H shift: *exchangeable_out 1 if it sits on
 *  O, N or S and exchanges (its position depends on solvent, concentration and
 *  temperature), else 0; *observed_out 0 if the solvent (D2O, CD3OD) exchanges
 *  it for deuterium so it gives no signal, else 1. Other atoms get 0 and 1.
 *  Either output may be NULL if not wanted. */
NMR_API int nmr_result_atom_exchangeable(const nmr_result *res, size_t record, size_t atom,
                                         int *exchangeable_out, int *observed_out);

/** Usual name of the solvent a record was predicted for ("CDCl3", "D2O", ...);
 *  "" for a failed record, NULL res or an index out of range. Its residual
 *  and water signals are in the record's JSON ("solvent"). Borrowed from res;
 *  never NULL. */
NMR_API const char *nmr_result_solvent(const nmr_result *res, size_t record);

/* --------------------------------------------------------- result: signals */
/* A signal is one line of a predicted spectrum: the atoms of one chemical
 * equivalence class of one nucleus (NMR_NUCLEUS_*). Signals of a record are
 * numbered 0 .. count-1 by decreasing shift (downfield first). 1H signals are
 * those a spectrum in the record's solvent shows: protons exchanged for
 * deuterium (OH, NH, SH in D2O or CD3OD) are left out (find them with
 * nmr_result_atom_exchangeable()), and deuterated positions give none.
 * Diastereotopic protons are separate classes, so separate signals. Accessors return
 * NMR_OK, or NMR_ERR_ARGUMENT if res or an output pointer is NULL, the record
 * is out of range or failed, the nucleus is not an NMR_NUCLEUS_* value or
 * the signal or atom index is out of range; outputs are left untouched on
 * failure. */

/** Number of signals of one nucleus in a record; 0 for a failed record, NULL
 *  res, an index out of range, an unknown nucleus or shifts not predicted. */
NMR_API size_t nmr_result_signal_count(const nmr_result *res, size_t record, int nucleus);

/** Shift of a signal in ppm from TMS and its uncertainty (one standard
 *  deviation, ppm). Either output may be NULL if not wanted. */
NMR_API int nmr_result_signal_shift(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                    double *ppm_out, double *uncertainty_ppm_out);

/** For a 13C signal, the number of protons bonded to each of its carbons
 *  (0 C, 1 CH, 2 CH2, 3 CH3; 4 for methane; 2H and 3H do not count), the
 *  distinction DEPT-style editing makes. 0 for other nuclei. */
NMR_API int nmr_result_signal_attached_h(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                         int *count_out);

/** Number of nuclei a signal stands for (its atoms). For 1H this is the
 *  integral in protons (3 for a CH3 group); for 13C, the number of carbons
 *  (routine 13C peak areas are not proportional to it). */
NMR_API int nmr_result_signal_integral(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                       int *count_out);

/** 1 if a 1H signal belongs to exchangeable protons (on O, N or S: often
 *  broad, position dependent on solvent, concentration and temperature),
 *  else 0; always 0 for 13C. */
NMR_API int nmr_result_signal_exchangeable(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                           int *exchangeable_out);

/** How the signal's shift was obtained, in words. Borrowed from res. */
NMR_API int nmr_result_signal_method(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                     const char **method_out);

/** Number of atoms in a signal (at least 1); 0 for any invalid argument. */
NMR_API size_t nmr_result_signal_atom_count(const nmr_result *res, size_t record, int nucleus, size_t signal);

/** Atom `i` (0 .. atom count - 1) of a signal, ascending by atom index. */
NMR_API int nmr_result_signal_atom(const nmr_result *res, size_t record, int nucleus, size_t signal, size_t i,
                                   size_t *atom_out);

/* ------------------------------------------------------------------- JSON */

/** Whole result as UTF-8 JSON: an array with one object per record, as printed
 *  by the nmrpred program (one line per record there). *json_out is yours:
 *  release it with nmr_string_free().
 *  Errors: NMR_ERR_ARGUMENT (res or json_out NULL), NMR_ERR_NOMEM. */
NMR_API int nmr_result_to_json(const nmr_result *res, char **json_out);

/** One record as a UTF-8 JSON object. *json_out is yours: release it with
 *  nmr_string_free().
 *  Errors: NMR_ERR_ARGUMENT (res or json_out NULL, record out of range), NMR_ERR_NOMEM. */
NMR_API int nmr_result_record_to_json(const nmr_result *res, size_t record, char **json_out);

/** Frees a string the library handed to you through a `char **` output. NULL is fine. */
NMR_API void nmr_string_free(char *s);

/* ------------------------------------------------------ result: couplings */
/* Estimated J couplings of a record (NMR_OPT_PREDICT_COUPLINGS on at the time
 * of nmr_predict()), sorted by atom pair. Each pair of atoms appears once,
 * with atom_a < atom_b; couplings between equivalent atoms are included. */

/** Number of couplings of a record; 0 for a failed record, NULL res, an index
 *  out of range or couplings not predicted. */
NMR_API size_t nmr_result_coupling_count(const nmr_result *res, size_t record);

/** Coupling `i` of a record: its two atoms and the signed coupling constant
 *  in Hz. Any output may be NULL if not wanted.
 *  Errors: NMR_ERR_ARGUMENT (res NULL, record out of range or failed, i not
 *  below the count); outputs are left untouched then. */
NMR_API int nmr_result_coupling(const nmr_result *res, size_t record, size_t i, size_t *atom_a_out,
                                size_t *atom_b_out, double *j_hz_out);

/** Details of coupling `i`: bonds between the atoms (2 for 2J, 3 for 3J, ...),
 *  one standard deviation in Hz, and the id of the coupling rule that gave it
 *  (borrowed from res). Any output may be NULL. Errors as nmr_result_coupling(). */
NMR_API int nmr_result_coupling_detail(const nmr_result *res, size_t record, size_t i, int *bonds_out,
                                       double *uncertainty_hz_out, const char **rule_out);

/** First-order multiplicity of a 1H signal in the trade's letters ("s", "d",
 *  "t", "dd", "m", "br s", ...), "" when couplings were not predicted and for
 *  13C. Borrowed from res. Errors as the other signal accessors. */
NMR_API int nmr_result_signal_multiplicity(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                           const char **multiplicity_out);

/** Number of resolved coupling constants behind a signal's multiplicity (one
 *  per splitting step: 2 for "dt"); 0 for any invalid argument. */
NMR_API size_t nmr_result_signal_j_count(const nmr_result *res, size_t record, int nucleus, size_t signal);

/** Coupling constant `i` of a signal's multiplicity, Hz, largest first.
 *  NMR_ERR_ARGUMENT also when i is not below nmr_result_signal_j_count(). */
NMR_API int nmr_result_signal_j(const nmr_result *res, size_t record, int nucleus, size_t signal, size_t i,
                                double *j_hz_out);

/** Number of simulated lines of a 1H signal (NMR_OPT_PREDICT_COUPLINGS on:
 *  the signal's multiplet at NMR_OPT_FIELD_MHZ); 0 for 13C, without
 *  couplings, or for any invalid argument. */
NMR_API size_t nmr_result_signal_line_count(const nmr_result *res, size_t record, int nucleus, size_t signal);

/** Copies the simulated lines of a signal into caller arrays of `capacity`
 *  elements: ppm, Hz from TMS and intensity (a signal's intensities add up to
 *  its integral), by increasing ppm. Any array may be NULL.
 *  Errors: NMR_ERR_ARGUMENT (as the other signal accessors, or capacity below
 *  the line count; nothing is written then). */
NMR_API int nmr_result_signal_lines(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                    double *ppm_out, double *hz_out, double *intensity_out, size_t capacity);

/* ---------------------------------------------------------------- spectra */

/** A simulated spectrum: its line list, its multiplets (one per signal) and
 *  the settings to sample and draw it. Immutable; any thread may read it; it
 *  outlives the context and result it came from. */
typedef struct nmr_spectrum nmr_spectrum;

/** Simulates a spin system given as JSON text:
 *    {"mhz": 400, "spins": [{"shift": 2.1, "nucleus": "1H"}, ...],
 *     "couplings": [[i, j, J_Hz], ...]}
 *  "mhz" (1H frequency of the magnet) may be left out: the context's
 *  NMR_OPT_FIELD_MHZ then applies. Optional keys: "observe" (isotope whose
 *  spectrum is wanted: "1H" default, "2H", "13C", "19F", "31P"),
 *  "line_width_hz", "weak_coupling_ratio", "max_block_size",
 *  "merge_tolerance_hz", "equivalent_shift_tolerance_ppm"; per spin optional
 *  "nucleus" (default "1H"), "class" (a non-negative integer: spins of one
 *  isotope with the same class are chemically equivalent) and "exchangeable"
 *  (true: takes part in no coupling). A spin may be a bare number (a 1H
 *  shift, ppm). Spin indices in "couplings" and in the multiplets' atoms are
 *  0-based positions in "spins". Strongly coupled spins are solved exactly.
 *  Errors (then *out is NULL): NMR_ERR_ARGUMENT (out, ctx or json NULL; text
 *  that is not such JSON, an unknown key, a bad value or a spin system the
 *  library rejects: the message names the key, spin or coupling),
 *  NMR_ERR_NOMEM, NMR_ERR_INTERNAL. */
NMR_API int nmr_simulate_json(nmr_spectrum **out, nmr_context *ctx, const char *spin_system_json);

/** Simulates the 1H or 13C spectrum of one record of a result: its predicted
 *  shifts and (for 1H) the couplings estimated by nmr_predict() (none when
 *  NMR_OPT_PREDICT_COUPLINGS was off), at the context's NMR_OPT_FIELD_MHZ and
 *  line width. Multiplet atoms are atom indices of the record; 13C spectra are
 *  proton-decoupled. The solvent's own signals are not included.
 *  Errors (then *out is NULL): NMR_ERR_ARGUMENT (a NULL pointer, record out of
 *  range, nucleus not NMR_NUCLEUS_*, or that nucleus not predicted), the
 *  record's own status when it failed (usually NMR_ERR_INPUT), NMR_ERR_NOMEM,
 *  NMR_ERR_INTERNAL. */
NMR_API int nmr_result_simulate(nmr_spectrum **out, nmr_context *ctx, const nmr_result *res, size_t record,
                                int nucleus);

/** Frees a spectrum and every string borrowed from it. NULL is fine. */
NMR_API void nmr_spectrum_free(nmr_spectrum *spec);

/** Observed isotope as its mass number (1, 2, 13, 19, 31); 0 for NULL. */
NMR_API int nmr_spectrum_nucleus(const nmr_spectrum *spec);

/** Frequency of the observed isotope, MHz (the field's 1H frequency times the
 *  isotope's frequency ratio); NaN for NULL. Hz = ppm times this. */
NMR_API double nmr_spectrum_observe_mhz(const nmr_spectrum *spec);

/** Number of lines (all multiplets together, by increasing ppm); 0 for NULL. */
NMR_API size_t nmr_spectrum_line_count(const nmr_spectrum *spec);

/** Copies every line into caller arrays of at least nmr_spectrum_line_count()
 *  elements: position in ppm and in Hz from the reference, and relative
 *  intensity (the lines add up to the number of observed nuclei). Any array
 *  may be NULL if not wanted; `capacity` is the length of the arrays given.
 *  Errors: NMR_ERR_ARGUMENT (spec NULL, or capacity below the line count;
 *  nothing is written then). */
NMR_API int nmr_spectrum_lines(const nmr_spectrum *spec, double *ppm_out, double *hz_out, double *intensity_out,
                               size_t capacity);

/** Number of multiplets (one per observed signal, downfield first); 0 for NULL. */
NMR_API size_t nmr_spectrum_multiplet_count(const nmr_spectrum *spec);

/* Multiplet accessors return NMR_OK, or NMR_ERR_ARGUMENT when spec or an
 * output is NULL or an index is out of range (outputs untouched then). */

/** Label of a multiplet in the trade's letters ("s", "d", "t", "q", "dd",
 *  "m", "br s", ...). Borrowed from spec. */
NMR_API int nmr_spectrum_multiplet_label(const nmr_spectrum *spec, size_t multiplet, const char **label_out);

/** Centre (intensity-weighted), lowest and highest line of a multiplet, ppm.
 *  Any output may be NULL. */
NMR_API int nmr_spectrum_multiplet_ppm(const nmr_spectrum *spec, size_t multiplet, double *ppm_out,
                                       double *ppm_low_out, double *ppm_high_out);

/** Integral of a multiplet: the number of nuclei it stands for. */
NMR_API int nmr_spectrum_multiplet_integral(const nmr_spectrum *spec, size_t multiplet, double *integral_out);

/** Number of resolved couplings behind a multiplet's label; 0 for any invalid argument. */
NMR_API size_t nmr_spectrum_multiplet_j_count(const nmr_spectrum *spec, size_t multiplet);

/** Coupling `i` behind a multiplet's label, Hz, largest first. */
NMR_API int nmr_spectrum_multiplet_j(const nmr_spectrum *spec, size_t multiplet, size_t i, double *j_hz_out);

/** Number of atoms (record spectra) or spins (spin-system spectra) of a
 *  multiplet; 0 for any invalid argument. */
NMR_API size_t nmr_spectrum_multiplet_atom_count(const nmr_spectrum *spec, size_t multiplet);

/** Atom or spin `i` of a multiplet, ascending. */
NMR_API int nmr_spectrum_multiplet_atom(const nmr_spectrum *spec, size_t multiplet, size_t i, size_t *atom_out);

/** Number of warnings of the simulation (couplings treated first-order, no
 *  spin of the observed isotope, ...); 0 for NULL. */
NMR_API size_t nmr_spectrum_warning_count(const nmr_spectrum *spec);

/** One warning, or NULL when spec is NULL or i is out of range. Borrowed from spec. */
NMR_API const char *nmr_spectrum_warning(const nmr_spectrum *spec, size_t i);

/** Number of samples nmr_spectrum_sample() wants when given 0 points: the
 *  NMR_OPT_POINTS in force when the spectrum was made, or the default for its
 *  width (a power of two from 65536); 0 for NULL. */
NMR_API size_t nmr_spectrum_default_points(const nmr_spectrum *spec);

/** Samples the spectrum on `points` equally spaced positions of its axis
 *  (NMR_OPT_PPM_LOW .. NMR_OPT_PPM_HIGH, ascending, both ends included) with
 *  its line shape and width: ppm_out receives the positions, intensity_out
 *  the heights in intensity units per ppm (a line of intensity I encloses
 *  area I over ppm). Either array may be NULL; each given one must hold
 *  `points` doubles.
 *  Errors: NMR_ERR_ARGUMENT (spec NULL, points outside 16 .. 4194304, a bad
 *  axis or width), NMR_ERR_NOMEM. */
NMR_API int nmr_spectrum_sample(const nmr_spectrum *spec, double *ppm_out, double *intensity_out, size_t points);

/** The sampled spectrum (nmr_spectrum_default_points() samples) as a
 *  JCAMP-DX 5.01 file of data type NMR SPECTRUM, plain numbers (AFFN), x in
 *  Hz from the reference, high ppm first. *text_out is yours: release it with
 *  nmr_string_free().
 *  Errors: NMR_ERR_ARGUMENT (spec or text_out NULL), NMR_ERR_UNSUPPORTED
 *  (observed isotope other than 1H and 13C), NMR_ERR_NOMEM. */
NMR_API int nmr_spectrum_to_jcamp(const nmr_spectrum *spec, char **text_out);

/** The sampled spectrum drawn as a self-contained SVG 1.1 picture (UTF-8),
 *  ppm decreasing to the right, each multiplet labelled with its centre,
 *  label, couplings and integral. *text_out is yours: release it with
 *  nmr_string_free(). Errors as nmr_spectrum_to_jcamp(). */
NMR_API int nmr_spectrum_to_svg(const nmr_spectrum *spec, char **text_out);

/** Lines and multiplets as UTF-8 JSON:
 *    {"observe", "mhz", "observe_mhz", "lines": [{"ppm", "hz", "intensity"}, ...],
 *     "multiplets": [{"ppm", "ppm_low", "ppm_high", "label", "j_hz",
 *                     "integral", "atoms", "lines"}, ...], "warnings": [...]}
 *  *json_out is yours: release it with nmr_string_free().
 *  Errors: NMR_ERR_ARGUMENT (a NULL pointer), NMR_ERR_NOMEM. */
NMR_API int nmr_spectrum_to_json(const nmr_spectrum *spec, char **json_out);

/* ------------------------------------------------ measured data, matching */

/** Candidates ranked against measured peak lists. Immutable; any thread may
 *  read it; it outlives its context. */
typedef struct nmr_match_result nmr_match_result;

/** Reads a measured peak list (the trade's prose style "1H NMR (400 MHz,
 *  CDCl3) δ 7.31 (d, J = 8.5 Hz, 2H), ...", a CSV table with a header row,
 *  or JSON; recognised from the content) and writes every spectrum it holds
 *  back in the prose style, one per line, normalised (multiplicities in the
 *  trade's letters, 2 decimals for 1H, 1 for 13C). *out is yours: release it
 *  with nmr_string_free().
 *  Errors (then *out is NULL): NMR_ERR_ARGUMENT (a NULL pointer),
 *  NMR_ERR_INPUT (text that is not a peak list: the message names the line,
 *  column and what was found), NMR_ERR_NOMEM. */
NMR_API int nmr_measured_format(char **out, nmr_context *ctx, const char *measured_text);

/** Predicts every candidate structure of `candidates_text` with the context's
 *  options and ranks them against the measured peak lists (at most one
 *  spectrum per nucleus, 1H and/or 13C, over all texts; each text as
 *  nmr_measured_format() reads it). candidates_format as nmr_predict()'s
 *  format (NULL or "auto" recognises it). When NMR_OPT_SOLVENT was never set
 *  on the context, the first solvent the measured data name that the tables
 *  know is used (else CDCl3). A candidate that cannot be read or predicted
 *  keeps its place with its status and message and the others are still
 *  ranked.
 *  Errors (then *out is NULL): NMR_ERR_ARGUMENT (a NULL pointer, unknown
 *  format, measured_count 0, two spectra of one nucleus, a nucleus the
 *  context does not predict), NMR_ERR_INPUT (no candidate in the text,
 *  unusable measured data), NMR_ERR_TABLES, NMR_ERR_NOMEM, NMR_ERR_INTERNAL. */
NMR_API int nmr_match(nmr_match_result **out, nmr_context *ctx, const char *candidates_format,
                      const char *candidates_text, const char *const *measured_texts, size_t measured_count);

/** Frees a match result and every string borrowed from it. NULL is fine. */
NMR_API void nmr_match_result_free(nmr_match_result *m);

/** Number of candidates (records of the candidates text, failed ones
 *  included), in input order; 0 for NULL. */
NMR_API size_t nmr_match_candidate_count(const nmr_match_result *m);

/** Status of a candidate: NMR_OK if it was predicted and matched, otherwise
 *  why not (usually NMR_ERR_INPUT). NMR_ERR_ARGUMENT for NULL or an index out
 *  of range. */
NMR_API int nmr_match_candidate_status(const nmr_match_result *m, size_t candidate);

/** Message of a failed candidate; "" for one that succeeded; a static message
 *  for NULL or an index out of range. Borrowed; never NULL. */
NMR_API const char *nmr_match_candidate_error(const nmr_match_result *m, size_t candidate);

/** Title of a candidate (as nmr_result_record_title()); "" if none or
 *  invalid. Borrowed; never NULL. */
NMR_API const char *nmr_match_candidate_title(const nmr_match_result *m, size_t candidate);

/** Number of ranked candidates (those whose status is NMR_OK); 0 for NULL. */
NMR_API size_t nmr_match_ranked_count(const nmr_match_result *m);

/** The candidate (input index) at position `rank` of the ranking, 0 being the
 *  best (lowest score); ties keep input order.
 *  Errors: NMR_ERR_ARGUMENT (NULL pointer, rank not below the ranked count). */
NMR_API int nmr_match_ranked(const nmr_match_result *m, size_t rank, size_t *candidate_out);

/* Per-candidate accessors return NMR_OK, NMR_ERR_ARGUMENT (NULL pointer or
 * index out of range) or the candidate's own status when it failed; outputs
 * are left untouched on failure. */

/** Score of a candidate: 0 is perfect agreement, larger is worse; comparable
 *  between candidates of one match. */
NMR_API int nmr_match_score(const nmr_match_result *m, size_t candidate, double *score_out);

/** Probability that the candidate is the right one if one of them is
 *  (exp(-score / T) normalised over the ranked candidates). */
NMR_API int nmr_match_probability(const nmr_match_result *m, size_t candidate, double *probability_out);

/** Verdict on a candidate: "consistent", "doubtful" or "inconsistent"
 *  (static text). */
NMR_API int nmr_match_verdict(const nmr_match_result *m, size_t candidate, const char **verdict_out);

/** Number of reasons why a candidate's verdict is not "consistent"; 0 for any
 *  invalid argument. */
NMR_API size_t nmr_match_reason_count(const nmr_match_result *m, size_t candidate);

/** Reason `i` of a candidate, in words, or NULL for any invalid argument. Borrowed. */
NMR_API const char *nmr_match_reason(const nmr_match_result *m, size_t candidate, size_t i);

/** Score of the second-best ranked candidate minus that of the best (>= 0).
 *  Errors: NMR_ERR_ARGUMENT (a NULL pointer), NMR_ERR_UNSUPPORTED (fewer than
 *  two ranked candidates: there is no margin; *margin_out untouched). */
NMR_API int nmr_match_margin(const nmr_match_result *m, double *margin_out);

/** The whole match as UTF-8 JSON:
 *    {"ranking": [{"candidate", "title", "score", "verdict", "probability"}, ...] best first,
 *     "margin" (null with fewer than two ranked candidates),
 *     "candidates": [{"candidate", "title", "score", "verdict", "reasons",
 *                     "worst", "warnings", "summary", "spectra"} or
 *                    {"candidate", "title", "error": {"code", "name", "message"}}, ...]}
 *  in input order, the keys of a candidate's match as documented for the
 *  library's match JSON (docs/matching.md). *json_out is yours: release it
 *  with nmr_string_free(). Errors: NMR_ERR_ARGUMENT (a NULL pointer), NMR_ERR_NOMEM. */
NMR_API int nmr_match_to_json(const nmr_match_result *m, char **json_out);

#ifdef __cplusplus
}
#endif

#endif /* NMRPRED_H */
