/* Fit a robust profile to invented moulding-line readings and score new shots.
 * Compiled and run by the tests (tests/e2e/examples.cmake); shown in
 * docs/getting-started.md. Data are invented. */
#include <stdio.h>
#include <stdlib.h>

#include "ellipsa.h"

#define N 40
#define P 3

static int report(ellipsa_status s, const char* what) {
  if (s == ELLIPSA_OK) return 0;
  fprintf(stderr, "%s failed: %s (%s)\n", what, ellipsa_last_error(), ellipsa_status_string(s));
  return 1;
}

int main(void) {
  /* Invented readings: melt temperature, injection pressure, cap mass; the
   * last two shots are faulty (short shot, pressure spike). Row-major. */
  double shots[N][P];
  unsigned seed = 12345u;
  for (int i = 0; i < N; ++i) {
    double u[3];
    for (int k = 0; k < 3; ++k) { /* roughly standard normal: 12 uniforms - 6 */
      u[k] = -6.0;
      for (int r = 0; r < 12; ++r) {
        seed = seed * 1103515245u + 12345u;
        u[k] += ((seed >> 8) % 10000) / 10000.0;
      }
    }
    shots[i][0] = 230.0 + 2.0 * u[0];
    shots[i][1] = 850.0 - 6.0 * u[0] + 10.0 * u[1];
    shots[i][2] = 2.85 + 0.002 * u[1] + 0.001 * u[2];
  }
  shots[N - 2][2] = 2.80;  /* short shot: mass low for its pressure */
  shots[N - 1][1] = 905.0; /* pressure spike */

  ellipsa_fit_options* options = NULL;
  ellipsa_model* model = NULL;
  const char* names[P] = {"melt_temp_C", "injection_pressure_bar", "cap_mass_g"};
  ellipsa_matrix x = ellipsa_matrix_row_major(&shots[0][0], N, P);
  if (report(ellipsa_fit_options_create(&options, ELLIPSA_METHOD_MCD), "options") ||
      report(ellipsa_fit_options_set_seed(options, 7), "seed") ||
      report(ellipsa_fit_options_set_column_names(options, names, P), "names") ||
      report(ellipsa_model_fit(&model, &x, options), "fit")) {
    ellipsa_fit_options_destroy(options);
    return 1;
  }

  double d2[N], contrib[N * P];
  int32_t flag[N];
  ellipsa_scores scores = ELLIPSA_SCORES_INIT;
  scores.squared_distance = d2;
  scores.flag = flag;
  scores.contribution = contrib;
  int failed = report(ellipsa_model_score(&scores, model, &x, 0.975), "score");
  int flagged_faults = 0;
  for (int i = 0; i < N && !failed; ++i) {
    if (flag[i] != 1) continue;
    int top = 0;
    for (int j = 1; j < P; ++j)
      if (contrib[i * P + j] > contrib[i * P + top]) top = j;
    printf("shot %2d flagged: squared distance %8.2f, mostly %s\n", i + 1, d2[i], names[top]);
    if (i >= N - 2) ++flagged_faults;
  }

  char* text = NULL;
  int64_t length = 0;
  failed = failed || report(ellipsa_model_save(&text, &length, model), "save");
  if (!failed) printf("model file: %lld bytes of JSON\n", (long long)length);
  ellipsa_text_free(text);
  ellipsa_model_destroy(model);
  ellipsa_fit_options_destroy(options);
  /* The example doubles as a test: both planted faults must be flagged. */
  return failed || flagged_faults != 2;
}
