/*
 * C ABI test, compiled as C99 (no extensions, -pedantic) and, from the same
 * file, as C++. Checks that every failure path returns a listed code and leaves
 * a message, that every _free accepts NULL, and a small happy path.
 *
 * Expected chemistry (common practice, any introductory NMR text): ethanol,
 * C2H6O, has 3 heavy atoms and 9 atoms with hydrogens, and six sets of
 * equivalent atoms (CH3 carbon, CH2 carbon, O, the three CH3 protons, the two
 * enantiotopic CH2 protons, the OH proton).
 */
#include <nmrpred.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

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
  CHECK(nmr_result_to_json(NULL, &json) == NMR_ERR_ARGUMENT);
  CHECK(nmr_result_record_to_json(NULL, 0, &json) == NMR_ERR_ARGUMENT);
  CHECK(json == NULL);
}

static void test_context_failures(void) {
  nmr_context *ctx = NULL;
  nmr_result *res = NULL;
  double v = 0.0;

  /* A failed nmr_context_new still hands back a context holding the reason. */
  CHECK_FAIL(ctx, nmr_context_new(&ctx, "tables-that-do-not-exist"), NMR_ERR_UNSUPPORTED);
  CHECK(ctx != NULL);
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
  /* A success clears the previous message. */
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
  test_batch_with_bad_record();
  if (failures) {
    fprintf(stderr, "%d check(s) failed\n", failures);
    return 1;
  }
  printf("all C ABI checks passed\n");
  return 0;
}
