/*
 * C ABI test, compiled as C99 (no extensions, -pedantic) and, from the same
 * file, as C++. Checks that every failure path returns a listed code and leaves
 * a message, that every _free accepts NULL, and a small happy path.
 *
 * Expected chemistry (common practice, any introductory NMR text): ethanol,
 * C2H6O, has 3 heavy atoms and 9 atoms with hydrogens, and six sets of
 * equivalent atoms (CH3 carbon, CH2 carbon, O, the three CH3 protons, the two
 * enantiotopic CH2 protons, the OH proton); its two carbons give two 13C
 * signals, the O-bearing CH2 downfield of the CH3. Toluene gives five 13C
 * signals. Its recorded shifts are GOTTLIEB-1997 (tables/SOURCES.md),
 * Table 2, CDCl3 (from memory), as kept in tables/reference/aromatic.tsv: a
 * lookup of toluene itself must name that record ("toluene") unless blind.
 * Records with ids "demo-..." are demo data with invented values, not
 * published shifts.
 *
 * 1H (common practice, any introductory NMR text): ethanol's protons give
 * three signals, CH3, CH2 and OH, whose integrals are 3, 2 and 1 (an integral
 * is proportional to the number of protons); the OH proton exchanges, and in
 * D2O it is replaced by deuterium and leaves the spectrum, so two signals
 * with integrals 3 and 2 remain.
 */
#include <nmrpred.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#ifndef NMRPRED_TABLES_SOURCE_DIR
#error "NMRPRED_TABLES_SOURCE_DIR (the project's tables folder) must be defined by the build"
#endif

/* Demo data (invented values, not published): a user record for toluene. */
static const char kDemoToluene[] =
    "id\tsmiles\tsolvent\tc13\th1\tsource\n"
    "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data (invented)\n";

static int failures = 0;

#define CHECK(cond)                                                  \
  do {                                                               \
    if (!(cond)) {                                                   \
      fprintf(stderr, "%s:%d: CHECK failed: %s\n", __FILE__, __LINE__, #cond); \
      ++failures;                                                    \
    }                                                                \
  } while (0)

/* A failure on a context must return `want` and leave a non-empty message. */
#define CHECK_FAIL(ctx, call, want)                                  \
  do {                                                               \
    int rc_ = (call);                                                \
    const char *msg_ = nmr_context_last_error(ctx);                  \
    if (rc_ != (want) || msg_ == NULL || msg_[0] == '\0') {          \
      fprintf(stderr, "%s:%d: %s returned %d (want %d), message '%s'\n", __FILE__, __LINE__, #call, rc_, \
              (want), msg_ ? msg_ : "(null)");                       \
      ++failures;                                                    \
    }                                                                \
  } while (0)

static int nonempty(const char *s) { return s != NULL && s[0] != '\0'; }

static void test_versions_and_status(void) {
  char expect[64];
  int code;
  CHECK(nmr_version_number() == NMR_VERSION_NUMBER);
  sprintf(expect, "%d.%d.%d", NMR_VERSION_MAJOR, NMR_VERSION_MINOR, NMR_VERSION_PATCH);
  CHECK(strcmp(nmr_version_string(), expect) == 0);
  for (code = NMR_OK; code <= NMR_ERR_INTERNAL; ++code) CHECK(nonempty(nmr_status_string(code)));
  CHECK(strcmp(nmr_status_string(NMR_ERR_INPUT), nmr_status_string(NMR_ERR_ARGUMENT)) != 0);
  CHECK(nonempty(nmr_status_string(-1)));
  CHECK(nonempty(nmr_status_string(9999)));
}

static void test_null_handles(void) {
  double v = 0.0;
  nmr_result *res = NULL;
  const char *s = NULL;
  int z = 0;
  ptrdiff_t heavy = 0;
  size_t cls = 0;
  char *json = NULL;

  nmr_context_free(NULL);
  nmr_result_free(NULL);
  nmr_string_free(NULL);

  CHECK(nmr_context_new(NULL, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nonempty(nmr_context_last_error(NULL)));
  CHECK(nmr_context_tables_version(NULL) != NULL);
  CHECK(nmr_context_set_option_double(NULL, NMR_OPT_HOSE_SPHERES, 3.0) == NMR_ERR_ARGUMENT);
  CHECK(nmr_context_get_option_double(NULL, NMR_OPT_HOSE_SPHERES, &v) == NMR_ERR_ARGUMENT);
  res = (nmr_result *)&v; /* must be reset to NULL on failure */
  CHECK(nmr_predict(&res, NULL, NULL, "C") == NMR_ERR_ARGUMENT);
  CHECK(res == NULL);

  CHECK(nmr_result_record_count(NULL) == 0);
  CHECK(nmr_result_failed_count(NULL) == 0);
  CHECK(nmr_result_record_status(NULL, 0) == NMR_ERR_ARGUMENT);
  CHECK(nonempty(nmr_result_record_error(NULL, 0)));
  CHECK(nmr_result_record_title(NULL, 0) != NULL);
  CHECK(nmr_result_warning_count(NULL, 0) == 0);
  CHECK(nmr_result_warning(NULL, 0, 0) == NULL);
  CHECK(nmr_result_atom_count(NULL, 0) == 0);
  CHECK(nmr_result_heavy_atom_count(NULL, 0) == 0);
  CHECK(nmr_result_class_count(NULL, 0) == 0);
  CHECK(nmr_result_topological_class_count(NULL, 0) == 0);
  CHECK(nmr_result_atom_element(NULL, 0, 0, &z, &s) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_isotope(NULL, 0, 0, &z) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_charge(NULL, 0, 0, &z) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_attached_to(NULL, 0, 0, &heavy) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_class(NULL, 0, 0, &cls) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_topological_class(NULL, 0, 0, &cls) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_hose(NULL, 0, 0, &s) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift(NULL, 0, 0, &v, &v) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift_method(NULL, 0, 0, &s) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift_reference_count(NULL, 0, 0, &cls) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift_reference(NULL, 0, 0, 0, &s) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_count(NULL, 0, NMR_NUCLEUS_13C) == 0);
  CHECK(nmr_result_signal_shift(NULL, 0, NMR_NUCLEUS_13C, 0, &v, &v) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_attached_h(NULL, 0, NMR_NUCLEUS_13C, 0, &z) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_method(NULL, 0, NMR_NUCLEUS_13C, 0, &s) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_atom_count(NULL, 0, NMR_NUCLEUS_13C, 0) == 0);
  CHECK(nmr_result_signal_atom(NULL, 0, NMR_NUCLEUS_13C, 0, 0, &cls) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_integral(NULL, 0, NMR_NUCLEUS_1H, 0, &z) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_exchangeable(NULL, 0, NMR_NUCLEUS_1H, 0, &z) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_exchangeable(NULL, 0, 0, &z, &z) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_solvent(NULL, 0) != NULL);
  CHECK(nmr_context_set_option_string(NULL, NMR_OPT_SOLVENT, "D2O") == NMR_ERR_ARGUMENT);
  CHECK(nmr_context_get_option_string(NULL, NMR_OPT_SOLVENT, &s) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_tables_version(NULL) != NULL);
  CHECK(nmr_context_add_reference(NULL, kDemoToluene) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_to_json(NULL, &json) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_record_to_json(NULL, 0, &json) == NMR_ERR_ARGUMENT);
  CHECK(json == NULL);
}

static void test_context_failures(void) {
  nmr_context *ctx = NULL;
  nmr_result *res = NULL;
  double v = 0.0;

  /* A failed nmr_context_new still hands back a context holding the reason;
   * without tables it predicts nothing, and says why. */
  CHECK_FAIL(ctx, nmr_context_new(&ctx, "tables-that-do-not-exist"), NMR_ERR_TABLES);
  CHECK(ctx != NULL);
  if (ctx) {
    CHECK(strstr(nmr_context_last_error(ctx), "tables-that-do-not-exist") != NULL);
    CHECK(nmr_context_tables_version(ctx) != NULL);
    CHECK(strcmp(nmr_context_tables_version(ctx), "") == 0);
    CHECK_FAIL(ctx, nmr_predict(&res, ctx, NULL, "C"), NMR_ERR_TABLES);
    CHECK(res == NULL);
    CHECK_FAIL(ctx, nmr_context_add_reference(ctx, kDemoToluene), NMR_ERR_TABLES);
    CHECK_FAIL(ctx, nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, "D2O"), NMR_ERR_TABLES);
  }
  nmr_context_free(ctx);
  ctx = NULL;

  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  CHECK(ctx != NULL);
  if (!ctx) return;
  CHECK(strcmp(nmr_context_last_error(ctx), "") == 0);
  CHECK(nonempty(nmr_context_tables_version(ctx)));

  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_HOSE_SPHERES, &v) == NMR_OK);
  CHECK(v == 4.0);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, 12345, 1.0), NMR_ERR_UNSUPPORTED);
  CHECK_FAIL(ctx, nmr_context_get_option_double(ctx, 12345, &v), NMR_ERR_UNSUPPORTED);
  CHECK_FAIL(ctx, nmr_context_get_option_double(ctx, NMR_OPT_HOSE_SPHERES, NULL), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, 0.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, 7.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, 2.5), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, NAN), NMR_ERR_ARGUMENT);
  /* Rejected values leave the option as it was. */
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_HOSE_SPHERES, &v) == NMR_OK);
  CHECK(v == 4.0);
  /* Switches: 0 or 1 only. */
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_BLIND, &v) == NMR_OK);
  CHECK(v == 0.0);
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_PREDICT_SHIFTS, &v) == NMR_OK);
  CHECK(v == 1.0);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_BLIND, 0.5), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_BLIND, 2.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_SHIFTS, NAN), NMR_ERR_ARGUMENT);
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_BLIND, &v) == NMR_OK);
  CHECK(v == 0.0);
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_BLIND, 1.0) == NMR_OK);
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_BLIND, &v) == NMR_OK);
  CHECK(v == 1.0);
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_PREDICT_H1, &v) == NMR_OK);
  CHECK(v == 1.0);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_H1, 0.5), NMR_ERR_ARGUMENT);

  /* Text options: the solvent. */
  {
    const char *text = NULL;
    CHECK(nmr_context_get_option_string(ctx, NMR_OPT_SOLVENT, &text) == NMR_OK);
    CHECK(text != NULL && strcmp(text, "CDCl3") == 0);
    CHECK_FAIL(ctx, nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, "chloroform-h"), NMR_ERR_ARGUMENT);
    CHECK(strstr(nmr_context_last_error(ctx), "chloroform-h") != NULL);
    CHECK(strstr(nmr_context_last_error(ctx), "CDCl3") != NULL); /* names the known ones */
    CHECK(strstr(nmr_context_last_error(ctx), "D2O") != NULL);
    CHECK_FAIL(ctx, nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, NULL), NMR_ERR_ARGUMENT);
    CHECK_FAIL(ctx, nmr_context_set_option_string(ctx, 12345, "D2O"), NMR_ERR_UNSUPPORTED);
    CHECK_FAIL(ctx, nmr_context_set_option_string(ctx, NMR_OPT_HOSE_SPHERES, "3"), NMR_ERR_UNSUPPORTED);
    CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_SOLVENT, 1.0), NMR_ERR_UNSUPPORTED);
    CHECK_FAIL(ctx, nmr_context_get_option_double(ctx, NMR_OPT_SOLVENT, &v), NMR_ERR_UNSUPPORTED);
    CHECK_FAIL(ctx, nmr_context_get_option_string(ctx, NMR_OPT_BLIND, &text), NMR_ERR_UNSUPPORTED);
    CHECK_FAIL(ctx, nmr_context_get_option_string(ctx, NMR_OPT_SOLVENT, NULL), NMR_ERR_ARGUMENT);
    /* Rejected values leave the option as it was. */
    CHECK(nmr_context_get_option_string(ctx, NMR_OPT_SOLVENT, &text) == NMR_OK);
    CHECK(text != NULL && strcmp(text, "CDCl3") == 0);
    /* Aliases are stored under the usual name. */
    CHECK(nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, " dmso ") == NMR_OK);
    CHECK(nmr_context_get_option_string(ctx, NMR_OPT_SOLVENT, &text) == NMR_OK);
    CHECK(text != NULL && strcmp(text, "DMSO-d6") == 0);
  }

  /* User records: errors name the line and leave the tables as they were. */
  {
    char version_before[128];
    strncpy(version_before, nmr_context_tables_version(ctx), sizeof version_before - 1);
    version_before[sizeof version_before - 1] = '\0';
    CHECK_FAIL(ctx, nmr_context_add_reference(ctx, NULL), NMR_ERR_ARGUMENT);
    CHECK_FAIL(ctx,
               nmr_context_add_reference(ctx, "id\tsmiles\tsolvent\tc13\th1\tsource\n"
                                              "demo-a\tCC\tCDCl3\t0=1x.0\t-\tdemo\n"),
               NMR_ERR_TABLES);
    CHECK(strstr(nmr_context_last_error(ctx), ":2:") != NULL);
    CHECK_FAIL(ctx, nmr_context_add_reference(ctx, "id\tsmiles\tsolvent\tc13\th1\tsource\n"), NMR_ERR_TABLES);
    CHECK_FAIL(ctx,
               nmr_context_add_reference(ctx, "id\tsmiles\tsolvent\tc13\th1\tsource\n"
                                              "toluene\tCc1ccccc1\tCDCl3\t0=10.0\t-\tdemo\n"),
               NMR_ERR_TABLES);
    CHECK(strcmp(nmr_context_tables_version(ctx), version_before) == 0);
  }
  /* A success clears the previous message. */
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_HOSE_SPHERES, &v) == NMR_OK);
  CHECK(strcmp(nmr_context_last_error(ctx), "") == 0);

  CHECK_FAIL(ctx, nmr_predict(NULL, ctx, NULL, "C"), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_predict(&res, ctx, NULL, NULL), NMR_ERR_ARGUMENT);
  CHECK(res == NULL);
  CHECK_FAIL(ctx, nmr_predict(&res, ctx, "no-such-format", "C"), NMR_ERR_ARGUMENT);
  CHECK(res == NULL);
  CHECK_FAIL(ctx, nmr_predict(&res, ctx, NULL, ""), NMR_ERR_INPUT);
  CHECK(res == NULL);
  CHECK_FAIL(ctx, nmr_predict(&res, ctx, "smiles", "  \n \n"), NMR_ERR_INPUT);
  CHECK(res == NULL);
  nmr_result_free(res);
  nmr_context_free(ctx);
}

/* Reference ids behind the shift of one atom, checked for `id`. */
static int atom_names_reference(const nmr_result *res, size_t atom, const char *id) {
  size_t count = 0, k;
  const char *got = NULL;
  if (nmr_result_atom_shift_reference_count(res, 0, atom, &count) != NMR_OK) return -1;
  for (k = 0; k < count; ++k) {
    if (nmr_result_atom_shift_reference(res, 0, atom, k, &got) != NMR_OK || got == NULL) return -1;
    if (strcmp(got, id) == 0) return 1;
  }
  return 0;
}

static void test_tables_and_blind_mode(void) {
  nmr_context *ctx = NULL, *dir_ctx = NULL;
  nmr_result *res = NULL;
  double ppm = 0.0, unc = 0.0;
  const char *builtin_version, *dir_version, *id = NULL, *method = NULL;
  size_t k;

  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;
  builtin_version = nmr_context_tables_version(ctx);
  CHECK(strncmp(builtin_version, "builtin-", 8) == 0);

  /* The project's tables folder holds the text that was built in: same hash. */
  CHECK(nmr_context_new(&dir_ctx, NMRPRED_TABLES_SOURCE_DIR) == NMR_OK);
  if (dir_ctx) {
    dir_version = nmr_context_tables_version(dir_ctx);
    CHECK(strncmp(dir_version, "dir-", 4) == 0);
    CHECK(strcmp(dir_version + 4, builtin_version + 8) == 0);
  }
  nmr_context_free(dir_ctx);

  /* Not blind: toluene's own record answers. */
  CHECK(nmr_predict(&res, ctx, "smiles", "Cc1ccccc1 toluene") == NMR_OK);
  if (res) {
    CHECK(strcmp(nmr_result_tables_version(res), builtin_version) == 0);
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_13C) == 5);
    for (k = 0; k < 7; ++k) CHECK(atom_names_reference(res, k, "toluene") == 1);
    CHECK(nmr_result_atom_shift(res, 0, 0, &ppm, &unc) == NMR_OK);
    CHECK(fabs(ppm - 21.5) <= 0.01); /* GOTTLIEB-1997 toluene CH3 */
    CHECK(unc > 0.0);
  }
  nmr_result_free(res);
  res = NULL;

  /* Blind: the record of the query's own constitution is left out. */
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_BLIND, 1.0) == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "Cc1ccccc1 toluene") == NMR_OK);
  if (res) {
    for (k = 0; k < 7; ++k) {
      CHECK(atom_names_reference(res, k, "toluene") == 0);
      CHECK(nmr_result_atom_shift(res, 0, k, &ppm, NULL) == NMR_OK);
      CHECK(!isnan(ppm));
    }
  }
  nmr_result_free(res);
  res = NULL;
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_BLIND, 0.0) == NMR_OK);

  /* User records come first and are named. */
  CHECK(nmr_context_add_reference(ctx, kDemoToluene) == NMR_OK);
  CHECK(strcmp(nmr_context_last_error(ctx), "") == 0);
  CHECK(strstr(nmr_context_tables_version(ctx), "+user-") != NULL);
  CHECK(nmr_predict(&res, ctx, "smiles", "Cc1ccccc1 toluene") == NMR_OK);
  if (res) {
    CHECK(strstr(nmr_result_tables_version(res), "+user-") != NULL);
    CHECK(nmr_result_atom_shift(res, 0, 4, &ppm, NULL) == NMR_OK);
    CHECK(fabs(ppm - 50.0) <= 0.01); /* demo data: para carbon */
    CHECK(nmr_result_atom_shift_reference(res, 0, 4, 0, &id) == NMR_OK);
    CHECK(id != NULL && strcmp(id, "demo-user-toluene") == 0);
    CHECK(nmr_result_atom_shift_method(res, 0, 4, &method) == NMR_OK);
    CHECK(nonempty(method));
  }
  nmr_result_free(res);
  res = NULL;
  /* The same ids again: refused, and the tables stay. */
  CHECK_FAIL(ctx, nmr_context_add_reference(ctx, kDemoToluene), NMR_ERR_TABLES);
  CHECK(strstr(nmr_context_last_error(ctx), "demo-user-toluene") != NULL);

  /* Shifts off: no shifts, no signals, classes as before. */
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_SHIFTS, 0.0) == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "Cc1ccccc1 toluene") == NMR_OK);
  if (res) {
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_13C) == 0);
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 0);
    CHECK(nmr_result_atom_shift(res, 0, 0, &ppm, &unc) == NMR_OK);
    CHECK(isnan(ppm) && isnan(unc));
    CHECK(nmr_result_class_count(res, 0) == 9); /* 5 carbon + 4 proton classes (common practice) */
  }
  nmr_result_free(res);
  nmr_context_free(ctx);
}

static void test_ethanol(void) {
  nmr_context *ctx = NULL;
  nmr_result *res = NULL;
  size_t n, i, cls = 0, cls2 = 0, h_on_c0 = 0;
  int z = 0, iso = -1, charge = -9;
  const char *sym = NULL, *hose = NULL;
  ptrdiff_t heavy = 0;
  char *json = NULL;
  size_t ch3_class = (size_t)-1;
  int ch3_same = 1;
  double ppm = 0.0, ppm2 = 0.0, unc = 0.0;
  const char *method = NULL;
  size_t count = 0;
  int attached = -1;

  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;
  CHECK(nmr_predict(&res, ctx, NULL, "CCO ethanol") == NMR_OK);
  CHECK(strcmp(nmr_context_last_error(ctx), "") == 0);
  if (!res) {
    nmr_context_free(ctx);
    return;
  }
  CHECK(nmr_result_record_count(res) == 1);
  CHECK(nmr_result_failed_count(res) == 0);
  CHECK(nmr_result_record_status(res, 0) == NMR_OK);
  CHECK(strcmp(nmr_result_record_error(res, 0), "") == 0);
  CHECK(strcmp(nmr_result_record_title(res, 0), "ethanol") == 0);
  n = nmr_result_atom_count(res, 0);
  CHECK(n == 9);
  CHECK(nmr_result_heavy_atom_count(res, 0) == 3);
  CHECK(nmr_result_class_count(res, 0) == 6);
  CHECK(nmr_result_topological_class_count(res, 0) == 6);

  CHECK(nmr_result_atom_element(res, 0, 2, &z, &sym) == NMR_OK);
  CHECK(z == 8);
  CHECK(sym != NULL && strcmp(sym, "O") == 0);
  CHECK(nmr_result_atom_element(res, 0, 0, NULL, NULL) == NMR_OK);
  CHECK(nmr_result_atom_isotope(res, 0, 0, &iso) == NMR_OK);
  CHECK(iso == 0);
  CHECK(nmr_result_atom_charge(res, 0, 0, &charge) == NMR_OK);
  CHECK(charge == 0);
  CHECK(nmr_result_atom_attached_to(res, 0, 0, &heavy) == NMR_OK);
  CHECK(heavy == -1);

  for (i = 3; i < n; ++i) {
    CHECK(nmr_result_atom_element(res, 0, i, &z, NULL) == NMR_OK);
    CHECK(z == 1);
    CHECK(nmr_result_atom_attached_to(res, 0, i, &heavy) == NMR_OK);
    CHECK(heavy >= 0 && heavy < 3);
    if (heavy == 0) {
      ++h_on_c0;
      CHECK(nmr_result_atom_class(res, 0, i, &cls) == NMR_OK);
      if (ch3_class == (size_t)-1) ch3_class = cls;
      else if (cls != ch3_class) ch3_same = 0;
    }
  }
  CHECK(h_on_c0 == 3);
  CHECK(ch3_same);
  /* The two carbons are not equivalent. */
  CHECK(nmr_result_atom_class(res, 0, 0, &cls) == NMR_OK);
  CHECK(nmr_result_atom_class(res, 0, 1, &cls2) == NMR_OK);
  CHECK(cls != cls2);
  CHECK(nmr_result_atom_topological_class(res, 0, 0, &cls) == NMR_OK);
  CHECK(cls < nmr_result_topological_class_count(res, 0));

  CHECK(nmr_result_atom_hose(res, 0, 0, &hose) == NMR_OK);
  CHECK(nonempty(hose));

  /* Shifts: carbons have one, other atoms NaN; signals downfield first. */
  CHECK(nmr_result_atom_shift(res, 0, 0, &ppm, &unc) == NMR_OK);
  CHECK(!isnan(ppm) && unc > 0.0);
  CHECK(nmr_result_atom_shift(res, 0, 1, &ppm2, NULL) == NMR_OK);
  CHECK(ppm2 > ppm); /* OCH2 downfield of CH3 */
  CHECK(nmr_result_atom_shift(res, 0, 1, NULL, NULL) == NMR_OK);
  CHECK(nmr_result_atom_shift(res, 0, 2, &ppm, &unc) == NMR_OK);
  CHECK(isnan(ppm) && isnan(unc));
  /* Protons have a 1H shift. */
  CHECK(nmr_result_atom_shift(res, 0, 3, &ppm, &unc) == NMR_OK);
  CHECK(!isnan(ppm) && unc > 0.0);
  CHECK(nmr_result_atom_shift_method(res, 0, 0, &method) == NMR_OK);
  CHECK(nonempty(method));
  CHECK(nmr_result_atom_shift_method(res, 0, 2, &method) == NMR_OK);
  CHECK(method != NULL && method[0] == '\0');
  CHECK(nmr_result_atom_shift_reference_count(res, 0, 2, &count) == NMR_OK);
  CHECK(count == 0);
  CHECK(nmr_result_atom_shift_reference_count(res, 0, 0, &count) == NMR_OK);
  CHECK(nmr_result_atom_shift_reference(res, 0, 0, count, &method) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift_reference(res, 0, 2, 0, &method) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_13C) == 2);
  CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 3); /* CH3, CH2, OH */
  CHECK(nmr_result_signal_count(res, 0, 7) == 0);
  CHECK(strcmp(nmr_result_solvent(res, 0), "CDCl3") == 0);
  CHECK(strcmp(nmr_result_solvent(res, 1), "") == 0);
  CHECK(nmr_result_signal_shift(res, 0, NMR_NUCLEUS_13C, 0, &ppm, &unc) == NMR_OK);
  CHECK(nmr_result_signal_shift(res, 0, NMR_NUCLEUS_13C, 1, &ppm2, NULL) == NMR_OK);
  CHECK(ppm > ppm2);
  CHECK(nmr_result_signal_atom_count(res, 0, NMR_NUCLEUS_13C, 0) == 1);
  CHECK(nmr_result_signal_atom(res, 0, NMR_NUCLEUS_13C, 0, 0, &cls) == NMR_OK);
  CHECK(cls == 1);
  CHECK(nmr_result_signal_attached_h(res, 0, NMR_NUCLEUS_13C, 0, &attached) == NMR_OK);
  CHECK(attached == 2);
  CHECK(nmr_result_signal_attached_h(res, 0, NMR_NUCLEUS_13C, 1, &attached) == NMR_OK);
  CHECK(attached == 3);
  CHECK(nmr_result_signal_method(res, 0, NMR_NUCLEUS_13C, 1, &method) == NMR_OK);
  CHECK(nonempty(method));
  /* Bad signal arguments fail and leave outputs alone. */
  ppm = 42.0;
  CHECK(nmr_result_signal_shift(res, 0, NMR_NUCLEUS_13C, 2, &ppm, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_shift(res, 0, 7, 0, &ppm, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_shift(res, 1, NMR_NUCLEUS_13C, 0, &ppm, NULL) == NMR_ERR_ARGUMENT);
  CHECK(ppm == 42.0);
  CHECK(nmr_result_signal_atom(res, 0, NMR_NUCLEUS_13C, 0, 1, &cls) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_atom(res, 0, NMR_NUCLEUS_13C, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_attached_h(res, 0, NMR_NUCLEUS_13C, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_method(res, 0, NMR_NUCLEUS_13C, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_atom_count(res, 0, NMR_NUCLEUS_13C, 2) == 0);
  CHECK(nmr_result_atom_shift_method(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift_reference_count(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_shift(res, 0, n, &ppm, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, 3, &attached) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_exchangeable(res, 0, NMR_NUCLEUS_1H, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_exchangeable(res, 0, n, &attached, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_exchangeable(res, 0, 0, NULL, NULL) == NMR_OK);

  /* Out-of-range indices and NULL outputs fail without touching outputs. */
  z = 42;
  CHECK(nmr_result_atom_element(res, 0, n, &z, NULL) == NMR_ERR_ARGUMENT);
  CHECK(z == 42);
  CHECK(nmr_result_atom_element(res, 1, 0, &z, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_isotope(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_charge(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_attached_to(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_class(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_topological_class(res, 0, 0, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_atom_hose(res, 0, n, &hose) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_record_status(res, 1) == NMR_ERR_ARGUMENT);
  CHECK(nonempty(nmr_result_record_error(res, 1)));
  CHECK(nmr_result_warning(res, 0, nmr_result_warning_count(res, 0)) == NULL);
  CHECK(nmr_result_to_json(res, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_record_to_json(res, 1, &json) == NMR_ERR_ARGUMENT);
  CHECK(json == NULL);

  CHECK(nmr_result_to_json(res, &json) == NMR_OK);
  CHECK(json != NULL && json[0] == '[' && strstr(json, "\"ethanol\"") != NULL);
  CHECK(json != NULL && strstr(json, "\"signals\"") != NULL && strstr(json, "\"shift\"") != NULL);
  nmr_string_free(json);
  json = NULL;
  CHECK(nmr_result_record_to_json(res, 0, &json) == NMR_OK);
  CHECK(json != NULL && json[0] == '{');
  nmr_string_free(json);

  /* Results outlive their context. */
  nmr_context_free(ctx);
  CHECK(nmr_result_atom_count(res, 0) == 9);
  nmr_result_free(res);
}

/* Integral and exchangeable flag of the 1H signal holding `atom`; -1 if none. */
static int h1_signal_of(const nmr_result *res, size_t atom, int *integral, int *exchangeable) {
  size_t k, i, a = 0;
  for (k = 0; k < nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H); ++k)
    for (i = 0; i < nmr_result_signal_atom_count(res, 0, NMR_NUCLEUS_1H, k); ++i)
      if (nmr_result_signal_atom(res, 0, NMR_NUCLEUS_1H, k, i, &a) == NMR_OK && a == atom) {
        if (nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, k, integral) != NMR_OK) return -1;
        if (nmr_result_signal_exchangeable(res, 0, NMR_NUCLEUS_1H, k, exchangeable) != NMR_OK) return -1;
        return (int)k;
      }
  return -1;
}

static void test_proton_signals_and_solvents(void) {
  nmr_context *ctx = NULL;
  nmr_result *res = NULL;
  int integral = 0, exch = -1, observed = -1, total = 0;
  size_t k;
  double ppm = 0.0, prev = 1e9;
  char *json = NULL;

  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;
  /* Ethanol in CDCl3: atoms 3-5 on the CH3, 6-7 on the CH2, 8 on O. */
  CHECK(nmr_predict(&res, ctx, "smiles", "CCO") == NMR_OK);
  if (res) {
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 3);
    CHECK(h1_signal_of(res, 3, &integral, &exch) >= 0 && integral == 3 && exch == 0);
    CHECK(h1_signal_of(res, 6, &integral, &exch) >= 0 && integral == 2 && exch == 0);
    CHECK(h1_signal_of(res, 8, &integral, &exch) >= 0 && integral == 1 && exch == 1);
    for (k = 0; k < 3; ++k) {
      CHECK(nmr_result_signal_shift(res, 0, NMR_NUCLEUS_1H, k, &ppm, NULL) == NMR_OK);
      CHECK(ppm <= prev); /* downfield first */
      prev = ppm;
      CHECK(nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, k, &integral) == NMR_OK);
      total += integral;
    }
    CHECK(total == 6);
    CHECK(nmr_result_atom_exchangeable(res, 0, 8, &exch, &observed) == NMR_OK);
    CHECK(exch == 1 && observed == 1);
    CHECK(nmr_result_atom_exchangeable(res, 0, 3, &exch, &observed) == NMR_OK);
    CHECK(exch == 0 && observed == 1);
    CHECK(nmr_result_atom_exchangeable(res, 0, 0, &exch, &observed) == NMR_OK); /* a carbon */
    CHECK(exch == 0 && observed == 1);
    /* 13C signals: the integral is the number of carbons, never exchangeable. */
    CHECK(nmr_result_signal_integral(res, 0, NMR_NUCLEUS_13C, 0, &integral) == NMR_OK);
    CHECK(integral == 1);
    CHECK(nmr_result_signal_exchangeable(res, 0, NMR_NUCLEUS_13C, 0, &exch) == NMR_OK);
    CHECK(exch == 0);
  }
  nmr_result_free(res);
  res = NULL;

  /* In D2O the OH proton is exchanged: two signals, integrals 3 and 2. */
  CHECK(nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, "D2O") == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "CCO") == NMR_OK);
  if (res) {
    CHECK(strcmp(nmr_result_solvent(res, 0), "D2O") == 0);
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 2);
    CHECK(h1_signal_of(res, 3, &integral, &exch) >= 0 && integral == 3);
    CHECK(h1_signal_of(res, 6, &integral, &exch) >= 0 && integral == 2);
    CHECK(h1_signal_of(res, 8, &integral, &exch) == -1);
    CHECK(nmr_result_atom_exchangeable(res, 0, 8, &exch, &observed) == NMR_OK);
    CHECK(exch == 1 && observed == 0);
    CHECK(nmr_result_atom_shift(res, 0, 8, &ppm, NULL) == NMR_OK);
    CHECK(!isnan(ppm)); /* predicted, though not seen */
    CHECK(nmr_result_record_to_json(res, 0, &json) == NMR_OK);
    CHECK(json != NULL && strstr(json, "\"1H_exchanged\"") != NULL && strstr(json, "\"D2O\"") != NULL);
    nmr_string_free(json);
  }
  nmr_result_free(res);
  res = NULL;

  /* Deuterium gives no 1H shift: CD3CH2OH, atoms 3-5 are 2H. */
  CHECK(nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, "CDCl3") == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "[2H]C([2H])([2H])CO") == NMR_OK);
  if (res) {
    CHECK(nmr_result_atom_shift(res, 0, 3, &ppm, NULL) == NMR_OK);
    CHECK(isnan(ppm));
    CHECK(h1_signal_of(res, 3, &integral, &exch) == -1);
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 2);
  }
  nmr_result_free(res);
  res = NULL;

  /* 1H off: 13C only. */
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_H1, 0.0) == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "CCO") == NMR_OK);
  if (res) {
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 0);
    CHECK(nmr_result_signal_count(res, 0, NMR_NUCLEUS_13C) == 2);
    CHECK(nmr_result_atom_shift(res, 0, 3, &ppm, NULL) == NMR_OK);
    CHECK(isnan(ppm));
  }
  nmr_result_free(res);
  nmr_context_free(ctx);
}

static void test_batch_with_bad_record(void) {
  nmr_context *ctx = NULL;
  nmr_result *res = NULL;
  int z = 0;
  char *json = NULL;

  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, 2.0) == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "CC\nC1CC\nc1ccccc1\n") == NMR_OK);
  if (!res) {
    nmr_context_free(ctx);
    return;
  }
  CHECK(nmr_result_record_count(res) == 3);
  CHECK(nmr_result_failed_count(res) == 1);
  CHECK(nmr_result_record_status(res, 0) == NMR_OK);
  CHECK(nmr_result_record_status(res, 1) == NMR_ERR_INPUT);
  CHECK(nonempty(nmr_result_record_error(res, 1)));
  CHECK(nmr_result_atom_count(res, 1) == 0);
  CHECK(nmr_result_atom_element(res, 1, 0, &z, NULL) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_record_status(res, 2) == NMR_OK);
  /* Benzene C6H6: one class of carbons and one of protons (common practice). */
  CHECK(nmr_result_atom_count(res, 2) == 12);
  CHECK(nmr_result_class_count(res, 2) == 2);
  CHECK(nmr_result_record_to_json(res, 1, &json) == NMR_OK);
  CHECK(json != NULL && strstr(json, "\"error\"") != NULL && strstr(json, "NMR_ERR_INPUT") != NULL);
  nmr_string_free(json);
  nmr_result_free(res);
  nmr_context_free(ctx);
}

/* ------------------------------------------------------ spectra, matching */
/*
 * Sources of the checks below:
 * - AB quartet: two spin-1/2 nuclei of shift difference dnu (Hz) and coupling
 *   J give four lines at the centre +-(D+J)/2 and +-(D-J)/2 with D =
 *   sqrt(dnu^2 + J^2); inner lines have relative intensity 1 + J/D, outer
 *   ones 1 - J/D. H. Guenther, NMR Spectroscopy, 3rd ed., Wiley 2013, the AB
 *   system (from memory); any NMR text derives the same closed form.
 * - First-order ethyl group (common practice): CH3 a triplet and CH2 a
 *   quartet, vicinal 3J(H,H) about 7 Hz (6 to 8 Hz).
 * - Ethanol in CDCl3: 1H 3.72 (q, CH2), 1.25 (t, CH3), 1.32 (s, OH); 13C
 *   58.28, 18.41. GOTTLIEB-1997 (tables/SOURCES.md), Tables 1 and 2 (from
 *   memory).
 * - JCAMP-DX 5.01 labels: McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151.
 */
static const char kAbJson[] =
    "{\"mhz\": 400, \"spins\": [{\"shift\": 3.0}, {\"shift\": 3.05}], \"couplings\": [[0, 1, 10.0]]}";

static const char kEthanolH1[] =
    "1H NMR (400 MHz, CDCl3) \xce\xb4 3.72 (q, J = 7.0 Hz, 2H), 1.32 (br s, 1H), 1.25 (t, J = 7.0 Hz, 3H).";
static const char kEthanolC13[] = "13C NMR (101 MHz, CDCl3) \xce\xb4 58.3, 18.4.";

static int near(double got, double want, double tol) { return fabs(got - want) <= tol; }

static void test_spin_system_json(void) {
  nmr_context *ctx = NULL;
  nmr_spectrum *spec = NULL;
  double ppm[8], hz[8], inten[8];
  double dnu = 20.0, j = 10.0, d = sqrt(20.0 * 20.0 + 10.0 * 10.0), centre = 3.025 * 400.0;
  size_t n, i, atom = 99;
  char *text = NULL;
  const char *label = NULL;
  double total = 0.0, integral = 0.0;
  double *sample_ppm = NULL, *sample_int = NULL;
  size_t points;

  (void)dnu;
  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;
  CHECK(nmr_simulate_json(&spec, ctx, kAbJson) == NMR_OK);
  if (!spec) {
    fprintf(stderr, "nmr_simulate_json: %s\n", nmr_context_last_error(ctx));
    nmr_context_free(ctx);
    ++failures;
    return;
  }
  CHECK(nmr_spectrum_nucleus(spec) == 1);
  CHECK(near(nmr_spectrum_observe_mhz(spec), 400.0, 1e-9));
  n = nmr_spectrum_line_count(spec);
  CHECK(n == 4);
  CHECK(nmr_spectrum_lines(spec, ppm, hz, inten, 3) == NMR_ERR_ARGUMENT);
  if (n == 4 && nmr_spectrum_lines(spec, ppm, hz, inten, 8) == NMR_OK) {
    /* Lines by increasing ppm: outer, inner, inner, outer. */
    CHECK(near(hz[0], centre - (d + j) / 2, 1e-3));
    CHECK(near(hz[1], centre - (d - j) / 2, 1e-3));
    CHECK(near(hz[2], centre + (d - j) / 2, 1e-3));
    CHECK(near(hz[3], centre + (d + j) / 2, 1e-3));
    CHECK(near(ppm[0] * 400.0, hz[0], 1e-6));
    /* Each spin contributes 1, so the four add up to 2: outer (1 - J/D)/2. */
    CHECK(near(inten[0], (1 - j / d) / 2, 1e-6));
    CHECK(near(inten[1], (1 + j / d) / 2, 1e-6));
    CHECK(near(inten[3] / inten[2], (1 - j / d) / (1 + j / d), 1e-6));
    for (i = 0; i < 4; ++i) total += inten[i];
    CHECK(near(total, 2.0, 1e-9));
  }
  /* Two chemically different spins give two multiplets, downfield first. */
  CHECK(nmr_spectrum_multiplet_count(spec) == 2);
  CHECK(nmr_spectrum_multiplet_label(spec, 0, &label) == NMR_OK && label != NULL);
  CHECK(nmr_spectrum_multiplet_integral(spec, 0, &integral) == NMR_OK && near(integral, 1.0, 1e-9));
  CHECK(nmr_spectrum_multiplet_atom_count(spec, 0) == 1);
  CHECK(nmr_spectrum_multiplet_atom(spec, 0, 0, &atom) == NMR_OK && atom == 1);
  CHECK(nmr_spectrum_multiplet_atom(spec, 0, 1, &atom) == NMR_ERR_ARGUMENT);
  CHECK(nmr_spectrum_multiplet_label(spec, 2, &label) == NMR_ERR_ARGUMENT);
  CHECK(nmr_spectrum_multiplet_j(spec, 0, 99, &integral) == NMR_ERR_ARGUMENT);

  /* Sampling: a line of intensity I encloses area I over ppm, so the sum
   * times the step gives the 2 protons (Gaussian lines: no tails lost). */
  CHECK(nmr_spectrum_default_points(spec) >= 65536);
  points = 65536;
  sample_ppm = (double *)malloc(points * sizeof(double));
  sample_int = (double *)malloc(points * sizeof(double));
  if (sample_ppm && sample_int) {
    CHECK(nmr_spectrum_sample(spec, sample_ppm, sample_int, points) == NMR_OK);
    total = 0.0;
    for (i = 0; i < points; ++i) total += sample_int[i];
    total *= (sample_ppm[points - 1] - sample_ppm[0]) / (double)(points - 1);
    CHECK(near(sample_ppm[0], -0.5, 1e-9));
    CHECK(near(sample_ppm[points - 1], 12.0, 1e-9));
    /* Lorentzian tails beyond the axis take a little under 1e-3 of the area. */
    CHECK(near(total, 2.0, 2e-3));
    CHECK(nmr_spectrum_sample(spec, sample_ppm, sample_int, 3) == NMR_ERR_ARGUMENT);
  }
  free(sample_ppm);
  free(sample_int);

  CHECK(nmr_spectrum_to_jcamp(spec, &text) == NMR_OK);
  CHECK(text != NULL && strncmp(text, "##TITLE=", 8) == 0 && strstr(text, "##JCAMP-DX=5.01") != NULL &&
        strstr(text, "##END=") != NULL);
  nmr_string_free(text);
  text = NULL;
  CHECK(nmr_spectrum_to_svg(spec, &text) == NMR_OK);
  CHECK(text != NULL && strstr(text, "<svg") != NULL && strstr(text, "</svg>") != NULL);
  nmr_string_free(text);
  text = NULL;
  CHECK(nmr_spectrum_to_json(spec, &text) == NMR_OK);
  CHECK(text != NULL && strstr(text, "\"multiplets\"") != NULL);
  nmr_string_free(text);
  CHECK(nmr_spectrum_to_json(spec, NULL) == NMR_ERR_ARGUMENT);
  nmr_spectrum_free(spec);
  spec = NULL;

  /* 19F (not a nucleus of JCAMP-DX or SVG output here): lines, no files. */
  CHECK(nmr_simulate_json(&spec, ctx, "{\"observe\": \"19F\", \"spins\": [{\"shift\": -120, \"nucleus\": \"19F\"}]}") ==
        NMR_OK);
  if (spec) {
    CHECK(nmr_spectrum_nucleus(spec) == 19);
    CHECK(nmr_spectrum_line_count(spec) == 1);
    text = NULL;
    CHECK(nmr_spectrum_to_jcamp(spec, &text) == NMR_ERR_UNSUPPORTED);
    CHECK(text == NULL);
  }
  nmr_spectrum_free(spec);

  /* Error paths: each names the problem. */
  spec = (nmr_spectrum *)&total;
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, NULL), NMR_ERR_ARGUMENT);
  CHECK(spec == NULL);
  CHECK_FAIL(ctx, nmr_simulate_json(NULL, ctx, kAbJson), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{not json"), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "[1, 2]"), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{\"spins\": [1.0], \"colour\": 1}"), NMR_ERR_ARGUMENT);
  CHECK(strstr(nmr_context_last_error(ctx), "colour") != NULL);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{\"spins\": [1.0, 2.0], \"couplings\": [[0, -1, 7]]}"),
             NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{\"spins\": [1.0, 2.0], \"couplings\": [[0, 5, 7]]}"),
             NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{\"spins\": []}"), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{\"spins\": [1.0], \"mhz\": -5}"), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, "{\"spins\": [{\"shift\": 1, \"nucleus\": \"17O\"}]}"),
             NMR_ERR_ARGUMENT);
  CHECK(spec == NULL);
  CHECK(nmr_simulate_json(&spec, NULL, kAbJson) == NMR_ERR_ARGUMENT);

  /* Options: ranges are checked at the call that sets them. */
  CHECK(nmr_context_get_option_double(ctx, NMR_OPT_FIELD_MHZ, &total) == NMR_OK && total == 400.0);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_FIELD_MHZ, 10.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_LINE_WIDTH_HZ, 0.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_LINE_SHAPE, 3.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_POINTS, 5.0), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_COUPLINGS, 0.5), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_context_set_option_string(ctx, NMR_OPT_FIELD_MHZ, "400"), NMR_ERR_UNSUPPORTED);
  /* A reversed axis fails when the spectrum is made. */
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_PPM_LOW, 5.0) == NMR_OK);
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_PPM_HIGH, 1.0) == NMR_OK);
  CHECK_FAIL(ctx, nmr_simulate_json(&spec, ctx, kAbJson), NMR_ERR_ARGUMENT);
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_PPM_HIGH, 6.0) == NMR_OK);
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_POINTS, 1024.0) == NMR_OK);
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_FIELD_MHZ, 600.0) == NMR_OK);
  /* Without "mhz" the context's field applies. */
  CHECK(nmr_simulate_json(&spec, ctx, "{\"spins\": [3.0]}") == NMR_OK);
  if (spec) {
    CHECK(near(nmr_spectrum_observe_mhz(spec), 600.0, 1e-9));
    CHECK(nmr_spectrum_default_points(spec) == 1024);
  }
  nmr_spectrum_free(spec);
  nmr_spectrum_free(NULL);

  CHECK(nmr_spectrum_line_count(NULL) == 0);
  CHECK(nmr_spectrum_multiplet_count(NULL) == 0);
  CHECK(nmr_spectrum_nucleus(NULL) == 0);
  CHECK(isnan(nmr_spectrum_observe_mhz(NULL)));
  CHECK(nmr_spectrum_lines(NULL, ppm, hz, inten, 8) == NMR_ERR_ARGUMENT);
  CHECK(nmr_spectrum_sample(NULL, ppm, inten, 16) == NMR_ERR_ARGUMENT);
  CHECK(nmr_spectrum_to_jcamp(NULL, &text) == NMR_ERR_ARGUMENT);
  CHECK(nmr_spectrum_to_svg(NULL, &text) == NMR_ERR_ARGUMENT);
  CHECK(nmr_spectrum_warning(NULL, 0) == NULL);
  CHECK(nmr_spectrum_warning_count(NULL) == 0);
  CHECK(nmr_spectrum_multiplet_j_count(NULL, 0) == 0);
  nmr_context_free(ctx);
}

/* Index of the 1H multiplet whose centre is nearest `ppm`. */
static size_t multiplet_near(const nmr_spectrum *spec, double ppm) {
  size_t i, best = 0;
  double bestd = 1e300, c = 0.0;
  for (i = 0; i < nmr_spectrum_multiplet_count(spec); ++i) {
    if (nmr_spectrum_multiplet_ppm(spec, i, &c, NULL, NULL) == NMR_OK && fabs(c - ppm) < bestd) {
      bestd = fabs(c - ppm);
      best = i;
    }
  }
  return best;
}

static void test_record_spectrum_and_couplings(void) {
  nmr_context *ctx = NULL;
  nmr_result *res = NULL;
  nmr_spectrum *spec = NULL;
  size_t i, n, a = 0, b = 0, sig, atoms;
  double j = 0.0, integral = 0.0, unc = 0.0;
  int bonds = 0, z = 0, found = 0;
  const char *label = NULL, *rule = NULL;
  ptrdiff_t ha = 0, hb = 0;

  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;
  CHECK(nmr_predict(&res, ctx, "smiles", "CCO ethanol\nC1CC\n") == NMR_OK);
  if (!res) {
    nmr_context_free(ctx);
    return;
  }
  /* Couplings: the CH3-CH2 vicinal 3J(H,H) is about 7 Hz (common practice). */
  n = nmr_result_coupling_count(res, 0);
  CHECK(n > 0);
  for (i = 0; i < n; ++i) {
    CHECK(nmr_result_coupling(res, 0, i, &a, &b, &j) == NMR_OK);
    CHECK(a < b);
    CHECK(nmr_result_coupling_detail(res, 0, i, &bonds, &unc, &rule) == NMR_OK);
    CHECK(rule != NULL);
    if (nmr_result_atom_attached_to(res, 0, a, &ha) == NMR_OK && nmr_result_atom_attached_to(res, 0, b, &hb) == NMR_OK &&
        ((ha == 0 && hb == 1) || (ha == 1 && hb == 0))) {
      ++found;
      CHECK(bonds == 3);
      CHECK(j >= 6.0 && j <= 8.0);
    }
  }
  CHECK(found == 6); /* 3 methyl protons x 2 methylene protons */
  CHECK(nmr_result_coupling(res, 0, n, &a, &b, &j) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_coupling_count(res, 1) == 0);
  CHECK(nmr_result_coupling(res, 1, 0, &a, &b, &j) == NMR_ERR_ARGUMENT);

  /* Signal multiplicities: CH3 triplet, CH2 quartet (first order, common practice). */
  for (sig = 0; sig < nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H); ++sig) {
    CHECK(nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, sig, &z) == NMR_OK);
    CHECK(nmr_result_signal_multiplicity(res, 0, NMR_NUCLEUS_1H, sig, &label) == NMR_OK);
    if (z == 3) {
      CHECK(label != NULL && strcmp(label, "t") == 0);
      CHECK(nmr_result_signal_j_count(res, 0, NMR_NUCLEUS_1H, sig) == 1);
      CHECK(nmr_result_signal_j(res, 0, NMR_NUCLEUS_1H, sig, 0, &j) == NMR_OK && j >= 6.0 && j <= 8.0);
      CHECK(nmr_result_signal_j(res, 0, NMR_NUCLEUS_1H, sig, 1, &j) == NMR_ERR_ARGUMENT);
      /* Triplet 1:2:1 whose intensities add up to the 3 protons. */
      CHECK(nmr_result_signal_line_count(res, 0, NMR_NUCLEUS_1H, sig) == 3);
      {
        double lp[3], lh[3], li[3];
        CHECK(nmr_result_signal_lines(res, 0, NMR_NUCLEUS_1H, sig, lp, lh, li, 2) == NMR_ERR_ARGUMENT);
        CHECK(nmr_result_signal_lines(res, 0, NMR_NUCLEUS_1H, sig, lp, lh, li, 3) == NMR_OK);
        CHECK(near(li[0] + li[1] + li[2], 3.0, 1e-6));
        CHECK(near(li[1] / li[0], 2.0, 1e-3) && near(li[1] / li[2], 2.0, 1e-3));
        CHECK(lp[0] < lp[1] && lp[1] < lp[2]);
      }
    } else if (z == 2) {
      CHECK(label != NULL && strcmp(label, "q") == 0);
    }
  }
  CHECK(nmr_result_signal_multiplicity(res, 0, NMR_NUCLEUS_1H, 99, &label) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_multiplicity(res, 0, 7, 0, &label) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_signal_j_count(NULL, 0, NMR_NUCLEUS_1H, 0) == 0);
  CHECK(nmr_result_signal_line_count(NULL, 0, NMR_NUCLEUS_1H, 0) == 0);
  CHECK(nmr_result_signal_lines(NULL, 0, NMR_NUCLEUS_1H, 0, NULL, NULL, NULL, 0) == NMR_ERR_ARGUMENT);

  /* The record's 1H spectrum: triplet and quartet with integrals 3 and 2. */
  CHECK(nmr_result_simulate(&spec, ctx, res, 0, NMR_NUCLEUS_1H) == NMR_OK);
  if (spec) {
    double ch3 = 0.0, ch2 = 0.0;
    for (sig = 0; sig < nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H); ++sig) {
      CHECK(nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, sig, &z) == NMR_OK);
      if (z == 3) nmr_result_signal_shift(res, 0, NMR_NUCLEUS_1H, sig, &ch3, NULL);
      if (z == 2) nmr_result_signal_shift(res, 0, NMR_NUCLEUS_1H, sig, &ch2, NULL);
    }
    i = multiplet_near(spec, ch3);
    CHECK(nmr_spectrum_multiplet_label(spec, i, &label) == NMR_OK && strcmp(label, "t") == 0);
    CHECK(nmr_spectrum_multiplet_integral(spec, i, &integral) == NMR_OK && near(integral, 3.0, 1e-6));
    atoms = nmr_spectrum_multiplet_atom_count(spec, i);
    CHECK(atoms == 3);
    CHECK(nmr_spectrum_multiplet_atom(spec, i, 0, &a) == NMR_OK &&
          nmr_result_atom_attached_to(res, 0, a, &ha) == NMR_OK && ha == 0);
    i = multiplet_near(spec, ch2);
    CHECK(nmr_spectrum_multiplet_label(spec, i, &label) == NMR_OK && strcmp(label, "q") == 0);
    CHECK(nmr_spectrum_multiplet_j_count(spec, i) == 1);
    CHECK(nmr_spectrum_multiplet_j(spec, i, 0, &j) == NMR_OK && j >= 6.0 && j <= 8.0);
    /* Triplet 1:2:1 + quartet 1:3:3:1 + the OH singlet: 8 lines (common practice). */
    CHECK(nmr_spectrum_line_count(spec) == 8);
  }
  nmr_spectrum_free(spec);
  spec = NULL;
  CHECK(nmr_result_simulate(&spec, ctx, res, 0, NMR_NUCLEUS_13C) == NMR_OK);
  if (spec) {
    CHECK(nmr_spectrum_nucleus(spec) == 13);
    CHECK(nmr_spectrum_multiplet_count(spec) == 2); /* proton-decoupled: two singlets */
  }
  nmr_spectrum_free(spec);
  spec = NULL;
  CHECK_FAIL(ctx, nmr_result_simulate(&spec, ctx, res, 1, NMR_NUCLEUS_1H), NMR_ERR_INPUT);
  CHECK_FAIL(ctx, nmr_result_simulate(&spec, ctx, res, 5, NMR_NUCLEUS_1H), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_result_simulate(&spec, ctx, res, 0, 19), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_result_simulate(&spec, ctx, NULL, 0, NMR_NUCLEUS_1H), NMR_ERR_ARGUMENT);
  CHECK(spec == NULL);
  nmr_result_free(res);
  res = NULL;

  /* Couplings off: no couplings, no multiplicity. */
  CHECK(nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_COUPLINGS, 0.0) == NMR_OK);
  CHECK(nmr_predict(&res, ctx, "smiles", "CCO") == NMR_OK);
  if (res) {
    CHECK(nmr_result_coupling_count(res, 0) == 0);
    CHECK(nmr_result_signal_multiplicity(res, 0, NMR_NUCLEUS_1H, 0, &label) == NMR_OK && label[0] == '\0');
  }
  nmr_result_free(res);
  nmr_context_free(ctx);
}

static void test_measured_and_match(void) {
  nmr_context *ctx = NULL;
  nmr_match_result *m = NULL;
  const char *both[2];
  const char *two_h1[2];
  char *text = NULL;
  size_t c = 99;
  double score0 = 0.0, score1 = 0.0, margin = -1.0, p0 = 0.0, p2 = 0.0;
  const char *verdict = NULL;

  both[0] = kEthanolH1;
  both[1] = kEthanolC13;
  two_h1[0] = kEthanolH1;
  two_h1[1] = kEthanolH1;
  CHECK(nmr_context_new(&ctx, NULL) == NMR_OK);
  if (!ctx) return;

  /* Normalised prose: long multiplicity names become the trade's letters
   * (docs/measured.md). */
  CHECK(nmr_measured_format(&text, ctx, "1H NMR (400 MHz, CDCl3) \xce\xb4 1.250 (triplet, J = 7.04 Hz, 3H)") ==
        NMR_OK);
  CHECK(text != NULL && strstr(text, "1.25 (t, J = 7.0 Hz, 3H)") != NULL);
  nmr_string_free(text);
  text = NULL;
  CHECK_FAIL(ctx, nmr_measured_format(&text, ctx, "1H NMR (400 MHz, CDCl3) \xce\xb4 7,31 (s, 1H)"), NMR_ERR_INPUT);
  CHECK(text == NULL);
  CHECK_FAIL(ctx, nmr_measured_format(&text, ctx, NULL), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_measured_format(NULL, ctx, kEthanolH1), NMR_ERR_ARGUMENT);

  /* Ethanol against its own data ranks above dimethyl ether; the unreadable
   * candidate keeps its place and is not ranked. */
  CHECK(nmr_match(&m, ctx, "smiles", "COC dimethyl ether\nC1CC\nCCO ethanol\n", both, 2) == NMR_OK);
  if (!m) {
    fprintf(stderr, "nmr_match: %s\n", nmr_context_last_error(ctx));
    ++failures;
    nmr_context_free(ctx);
    return;
  }
  CHECK(nmr_match_candidate_count(m) == 3);
  CHECK(nmr_match_ranked_count(m) == 2);
  CHECK(nmr_match_candidate_status(m, 1) == NMR_ERR_INPUT);
  CHECK(nonempty(nmr_match_candidate_error(m, 1)));
  CHECK(strcmp(nmr_match_candidate_title(m, 2), "ethanol") == 0);
  CHECK(nmr_match_ranked(m, 0, &c) == NMR_OK && c == 2);
  CHECK(nmr_match_ranked(m, 1, &c) == NMR_OK && c == 0);
  CHECK(nmr_match_ranked(m, 2, &c) == NMR_ERR_ARGUMENT);
  CHECK(nmr_match_score(m, 2, &score0) == NMR_OK);
  CHECK(nmr_match_score(m, 0, &score1) == NMR_OK);
  CHECK(score0 < score1);
  CHECK(nmr_match_margin(m, &margin) == NMR_OK && near(margin, score1 - score0, 1e-9));
  CHECK(nmr_match_probability(m, 2, &p2) == NMR_OK && nmr_match_probability(m, 0, &p0) == NMR_OK);
  CHECK(near(p0 + p2, 1.0, 1e-9) && p2 > p0);
  CHECK(nmr_match_verdict(m, 2, &verdict) == NMR_OK && strcmp(verdict, "consistent") == 0);
  CHECK(nmr_match_verdict(m, 0, &verdict) == NMR_OK && strcmp(verdict, "consistent") != 0);
  CHECK(nmr_match_reason_count(m, 0) > 0 && nonempty(nmr_match_reason(m, 0, 0)));
  CHECK(nmr_match_reason(m, 0, 999) == NULL);
  CHECK(nmr_match_score(m, 1, &score0) == NMR_ERR_INPUT);
  CHECK(nmr_match_score(m, 3, &score0) == NMR_ERR_ARGUMENT);
  CHECK(nmr_match_verdict(m, 1, &verdict) == NMR_ERR_INPUT);
  CHECK(nmr_match_to_json(m, &text) == NMR_OK);
  CHECK(text != NULL && strstr(text, "\"ranking\"") != NULL && strstr(text, "NMR_ERR_INPUT") != NULL &&
        strstr(text, "\"assignment\"") != NULL);
  nmr_string_free(text);
  text = NULL;
  nmr_match_result_free(m);
  m = NULL;

  /* One candidate: no margin. */
  CHECK(nmr_match(&m, ctx, NULL, "CCO", both, 1) == NMR_OK);
  CHECK(m != NULL && nmr_match_margin(m, &margin) == NMR_ERR_UNSUPPORTED);
  nmr_match_result_free(m);
  m = (nmr_match_result *)&margin;

  /* Error paths. */
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, "CCO", both, 0), NMR_ERR_ARGUMENT);
  CHECK(m == NULL);
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, NULL, both, 2), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, "CCO", NULL, 2), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_match(NULL, ctx, NULL, "CCO", both, 2), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_match(&m, ctx, "nonsense", "CCO", both, 2), NMR_ERR_ARGUMENT);
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, "   ", both, 2), NMR_ERR_INPUT);
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, "CCO", two_h1, 2), NMR_ERR_ARGUMENT);
  both[1] = "this is not a peak list";
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, "CCO", both, 2), NMR_ERR_INPUT);
  CHECK(strstr(nmr_context_last_error(ctx), "measured_texts[1]") != NULL);
  both[1] = NULL;
  CHECK_FAIL(ctx, nmr_match(&m, ctx, NULL, "CCO", both, 2), NMR_ERR_ARGUMENT);
  CHECK(m == NULL);
  CHECK(nmr_match(&m, NULL, NULL, "CCO", both, 1) == NMR_ERR_ARGUMENT);

  nmr_match_result_free(NULL);
  CHECK(nmr_match_candidate_count(NULL) == 0);
  CHECK(nmr_match_ranked_count(NULL) == 0);
  CHECK(nmr_match_candidate_status(NULL, 0) == NMR_ERR_ARGUMENT);
  CHECK(nonempty(nmr_match_candidate_error(NULL, 0)));
  CHECK(nmr_match_candidate_title(NULL, 0) != NULL);
  CHECK(nmr_match_ranked(NULL, 0, &c) == NMR_ERR_ARGUMENT);
  CHECK(nmr_match_score(NULL, 0, &score0) == NMR_ERR_ARGUMENT);
  CHECK(nmr_match_margin(NULL, &margin) == NMR_ERR_ARGUMENT);
  CHECK(nmr_match_to_json(NULL, &text) == NMR_ERR_ARGUMENT);
  CHECK(nmr_match_reason_count(NULL, 0) == 0);
  nmr_context_free(ctx);
}

int main(void) {
  test_versions_and_status();
  test_null_handles();
  test_context_failures();
  test_ethanol();
  test_tables_and_blind_mode();
  test_proton_signals_and_solvents();
  test_batch_with_bad_record();
  test_spin_system_json();
  test_record_spectrum_and_couplings();
  test_measured_and_match();
  if (failures) {
    fprintf(stderr, "%d check(s) failed\n", failures);
    return 1;
  }
  printf("all C ABI checks passed\n");
  return 0;
}
