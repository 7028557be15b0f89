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

int main(void) {
  test_versions_and_status();
  test_null_handles();
  test_context_failures();
  test_ethanol();
  test_tables_and_blind_mode();
  test_proton_signals_and_solvents();
  test_batch_with_bad_record();
  if (failures) {
    fprintf(stderr, "%d check(s) failed\n", failures);
    return 1;
  }
  printf("all C ABI checks passed\n");
  return 0;
}
