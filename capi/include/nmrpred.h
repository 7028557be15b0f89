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

/** Option keys. Append only. Keys 1 and 2 are reserved for the spectrum
 *  options (field in MHz, line width in Hz). Numeric options are set with
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

#ifdef __cplusplus
}
#endif

#endif /* NMRPRED_H */
