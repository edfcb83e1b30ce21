/*
 * The C interface's test program: fit, score, prepared scorer, model files
 * and bytes, and every error status a caller can cause. Run by
 * crates/mvdist-c/tests/c/run.sh (also under valgrind) from .ci/run.
 *
 * Data are a demo scenario generated here (two correlated measurements of
 * 40 batches); the distances are checked against a 2 × 2 Mahalanobis
 * computation written out in this file (explicit inverse of the sample
 * covariance, the textbook formula), and p-values against the cutoff
 * (p = alpha at the cutoff) and the χ²(2) identity P(χ² > x) = exp(−x/2).
 */
#include "mvdist.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static int failures = 0;

#define CHECK(cond, ...)                                                     \
  do {                                                                       \
    if (!(cond)) {                                                           \
      failures++;                                                            \
      fprintf(stderr, "%s:%d: check failed: %s: ", __FILE__, __LINE__, #cond); \
      fprintf(stderr, __VA_ARGS__);                                          \
      fprintf(stderr, " (last error: %s)\n", mvdist_last_error_message());   \
    }                                                                        \
  } while (0)

#define N 40
#define P 2

static void demo_rows(double *rows) {
  for (int i = 0; i < N; i++) {
    double t = (double)i;
    double a = sin(0.9 * t), b = cos(1.7 * t);
    rows[i * P] = 10.0 + a;
    rows[i * P + 1] = 5.0 + 0.5 * a + 0.3 * b;
  }
}

/* (x − μ)ᵀ S⁻¹ (x − μ) with the unbiased covariance, written out. */
static double textbook_d2(const double *rows, const double *x) {
  double m0 = 0, m1 = 0;
  for (int i = 0; i < N; i++) {
    m0 += rows[i * P];
    m1 += rows[i * P + 1];
  }
  m0 /= N;
  m1 /= N;
  double s00 = 0, s01 = 0, s11 = 0;
  for (int i = 0; i < N; i++) {
    double a = rows[i * P] - m0, b = rows[i * P + 1] - m1;
    s00 += a * a;
    s01 += a * b;
    s11 += b * b;
  }
  s00 /= N - 1;
  s01 /= N - 1;
  s11 /= N - 1;
  double det = s00 * s11 - s01 * s01;
  double a = x[0] - m0, b = x[1] - m1;
  return (s11 * a * a - 2 * s01 * a * b + s00 * b * b) / det;
}

static void test_fit_and_score(void) {
  double rows[N * P];
  demo_rows(rows);
  mvdist_model *model = NULL;
  CHECK(mvdist_model_fit(rows, N, P, MVDIST_FIT_CLASSICAL, &model) == MVDIST_OK, "fit");
  CHECK(mvdist_model_dim(model) == P, "dim");
  CHECK(mvdist_model_sample_size(model) == N, "sample size");

  double new_rows[3 * P] = {10.0, 5.0, 11.5, 3.9, 9.2, 4.7};
  double d2[3], p[3];
  CHECK(mvdist_model_score(model, new_rows, 3, P, MVDIST_ORIGIN_NEW, d2, p) == MVDIST_OK, "score");
  for (int i = 0; i < 3; i++) {
    double want = textbook_d2(rows, &new_rows[i * P]);
    CHECK(fabs(d2[i] - want) <= 1e-10 * want, "row %d: d2 %.17g vs %.17g", i, d2[i], want);
    CHECK(p[i] > 0.0 && p[i] <= 1.0, "row %d: p %g", i, p[i]);
  }
  CHECK(p[1] < 1e-6, "the broken-correlation row is far out: p %g", p[1]);

  double cutoff = 0;
  CHECK(mvdist_model_cutoff(model, 0.01, MVDIST_ORIGIN_NEW, &cutoff) == MVDIST_OK, "cutoff");
  /* Known parameters: χ²(2), P(χ² > x) = exp(−x/2), so the cutoff is 2 ln 100. */
  double chi = 0;
  CHECK(mvdist_model_cutoff(model, 0.01, MVDIST_ORIGIN_KNOWN_PARAMETERS, &chi) == MVDIST_OK, "χ² cutoff");
  CHECK(fabs(chi - 2.0 * log(100.0)) < 1e-12, "χ²(2) cutoff %.17g", chi);
  CHECK(cutoff > chi, "the F cutoff (%g) is beyond the χ² one (%g)", cutoff, chi);

  /* The prepared scorer: flags without p-values, and with them. */
  mvdist_scorer *scorer = NULL;
  CHECK(mvdist_scorer_new(model, MVDIST_ORIGIN_NEW, 0.01, &scorer) == MVDIST_OK, "scorer");
  CHECK(fabs(mvdist_scorer_cutoff(scorer) - cutoff) == 0.0, "scorer cutoff");
  uint8_t flags[3];
  size_t flagged = 99;
  double d2s[3], ps[3];
  CHECK(mvdist_scorer_score(scorer, new_rows, 3, P, d2s, NULL, flags, &flagged) == MVDIST_OK, "flags");
  CHECK(flagged == 1 && flags[0] == 0 && flags[1] == 1, "flagged %zu: %d %d %d", flagged, flags[0], flags[1], flags[2]);
  CHECK(mvdist_scorer_score(scorer, new_rows, 3, P, d2s, ps, flags, NULL) == MVDIST_OK, "flags and p");
  for (int i = 0; i < 3; i++) {
    CHECK(d2s[i] == d2[i] && ps[i] == p[i], "scorer row %d", i);
    CHECK(flags[i] == (d2s[i] > cutoff), "flag %d", i);
  }
  mvdist_scorer_free(scorer);

  /* Files and bytes. */
  const char *path = "mvdist_c_test_model.bin";
  CHECK(mvdist_model_save(model, path, 1) == MVDIST_OK, "save");
  mvdist_model *loaded = NULL;
  CHECK(mvdist_model_load(path, &loaded) == MVDIST_OK, "load");
  remove(path);
  uint8_t *bytes = NULL;
  size_t len = 0;
  CHECK(mvdist_model_to_bytes(loaded, &bytes, &len) == MVDIST_OK && len > 0, "to bytes");
  mvdist_model *again = NULL;
  CHECK(mvdist_model_from_bytes(bytes, len, &again) == MVDIST_OK, "from bytes");
  mvdist_bytes_free(bytes, len);
  double d2l[3];
  CHECK(mvdist_model_squared_distances(again, new_rows, 3, P, d2l) == MVDIST_OK, "distances");
  for (int i = 0; i < 3; i++) CHECK(d2l[i] == d2[i], "reloaded row %d", i);
  double location[P];
  CHECK(mvdist_model_location(again, location, P) == MVDIST_OK, "location");
  mvdist_model_free(loaded);
  mvdist_model_free(again);

  /* The robust and shrinkage fits. */
  mvdist_model *robust = NULL, *shrunk = NULL;
  CHECK(mvdist_model_fit_mcd(rows, N, P, 0.75, 7, &robust) == MVDIST_OK, "MCD");
  CHECK(mvdist_model_fit(rows, N, P, MVDIST_FIT_LEDOIT_WOLF, &shrunk) == MVDIST_OK, "Ledoit–Wolf");
  mvdist_model_free(robust);
  mvdist_model_free(shrunk);
  mvdist_model_free(model);
  mvdist_model_free(NULL);
  mvdist_scorer_free(NULL);
}

static void expect(mvdist_status got, mvdist_status want, const char *what) {
  CHECK(got == want, "%s: status %d, expected %d", what, (int)got, (int)want);
  if (got != MVDIST_OK) {
    CHECK(strlen(mvdist_last_error_message()) > 0, "%s: a message", what);
  }
}

static void test_every_error_status(void) {
  double rows[N * P];
  demo_rows(rows);
  mvdist_model *model = NULL;
  expect(mvdist_model_fit(NULL, N, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_NULL_ARGUMENT, "null rows");
  expect(mvdist_model_fit(rows, N, P, MVDIST_FIT_CLASSICAL, NULL), MVDIST_NULL_ARGUMENT, "null out");
  expect(mvdist_model_fit(rows, 0, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_EMPTY, "no rows");
  expect(mvdist_model_fit(rows, N, 0, MVDIST_FIT_CLASSICAL, &model), MVDIST_EMPTY, "no columns");
  double bad[N * P];
  memcpy(bad, rows, sizeof bad);
  bad[5 * P + 1] = NAN;
  expect(mvdist_model_fit(bad, N, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_NON_FINITE, "NaN");
  CHECK(strstr(mvdist_last_error_message(), "row 5, column 1") != NULL, "names the cell");
  expect(mvdist_model_fit(rows, 2, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_TOO_FEW_ROWS, "n <= p");
  memcpy(bad, rows, sizeof bad);
  for (int i = 0; i < N; i++) bad[i * P + 1] = 3.0;
  expect(mvdist_model_fit(bad, N, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_ZERO_VARIANCE, "constant column");
  for (int i = 0; i < N; i++) bad[i * P + 1] = 2.0 * bad[i * P] + 1.0;
  expect(mvdist_model_fit(bad, N, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_COLLINEAR, "collinear");
  /* Most rows on one line: the robust fit reports an exact fit. */
  for (int i = 0; i < N; i++) {
    bad[i * P] = (double)i;
    bad[i * P + 1] = i < 30 ? 2.0 * i + 1.0 : 50.0 - (double)i * 0.37;
  }
  expect(mvdist_model_fit_mcd(bad, N, P, 0.0, 1, &model), MVDIST_EXACT_FIT, "exact fit");
  expect(mvdist_model_fit(rows, N, P, 42, &model), MVDIST_INVALID_PARAMETER, "method code");
  expect(mvdist_model_fit_mcd(rows, N, P, 1.5, 1, &model), MVDIST_INVALID_PARAMETER, "support fraction");
  CHECK(model == NULL, "no handle after failures");

  expect(mvdist_model_fit(rows, N, P, MVDIST_FIT_CLASSICAL, &model), MVDIST_OK, "fit");
  double d2[2], p[2], c;
  double three[3] = {1, 2, 3};
  expect(mvdist_model_squared_distances(model, three, 1, 3, d2), MVDIST_SHAPE_MISMATCH, "columns");
  double location[3];
  expect(mvdist_model_location(model, location, 3), MVDIST_SHAPE_MISMATCH, "location length");
  double far[2] = {1e300, -1e300};
  expect(mvdist_model_squared_distances(model, far, 1, P, d2), MVDIST_OVERFLOW, "overflow");
  expect(mvdist_model_score(model, rows, 2, P, 9, d2, p), MVDIST_INVALID_PARAMETER, "origin code");
  expect(mvdist_model_cutoff(model, 0.0, MVDIST_ORIGIN_NEW, &c), MVDIST_INVALID_PARAMETER, "alpha");
  expect(mvdist_model_score(NULL, rows, 2, P, MVDIST_ORIGIN_NEW, d2, p), MVDIST_NULL_ARGUMENT, "null model");
  expect(mvdist_model_score(model, rows, 2, P, MVDIST_ORIGIN_NEW, d2, NULL), MVDIST_NULL_ARGUMENT, "null p");
  mvdist_scorer *scorer = NULL;
  expect(mvdist_scorer_new(model, MVDIST_ORIGIN_NEW, 1.0, &scorer), MVDIST_INVALID_PARAMETER, "scorer alpha");
  CHECK(scorer == NULL && isnan(mvdist_scorer_cutoff(NULL)), "no scorer");
  expect(mvdist_model_save(model, "/nonexistent-folder/m.json", 0), MVDIST_IO, "save into a missing folder");
  mvdist_model *loaded = NULL;
  expect(mvdist_model_load("/nonexistent-folder/m.json", &loaded), MVDIST_IO, "load a missing file");
  const char *junk = "{\"format\": \"something else\"}";
  expect(mvdist_model_from_bytes((const uint8_t *)junk, strlen(junk), &loaded), MVDIST_FORMAT, "not a model file");
  expect(mvdist_model_load(NULL, &loaded), MVDIST_NULL_ARGUMENT, "null path");
  CHECK(loaded == NULL, "no handle");
  /* A success clears the message. */
  expect(mvdist_model_cutoff(model, 0.05, MVDIST_ORIGIN_IN_SAMPLE, &c), MVDIST_OK, "cutoff");
  CHECK(strlen(mvdist_last_error_message()) == 0, "message cleared");
  mvdist_model_free(model);
}

int main(void) {
  printf("mvdist %s\n", mvdist_version());
  test_fit_and_score();
  test_every_error_status();
  if (failures) {
    fprintf(stderr, "%d check(s) failed\n", failures);
    return 1;
  }
  printf("all C interface checks passed\n");
  return 0;
}
