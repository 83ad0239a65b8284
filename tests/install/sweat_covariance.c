/* Built by tests/install/ against an installed copy of ellipsa (through
 * find_package and through pkg-config) and run by test_installed.py, which
 * checks its output against the reference file of the data.
 *
 * Reads a CSV file of numbers with one header line (at most 64 rows of 3
 * columns: the sweat data of Johnson & Wichern, Example 5.2), fits the
 * classical profile (divisor n-1) and prints, one item a line:
 *   version <ellipsa_version()> <1 if it matches the header's ELLIPSA_VERSION_NUMBER>
 *   rows <rows used>
 *   mean <j> <value>
 *   cov <i> <j> <value>
 * Values are printed with 17 significant digits (they round-trip). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <ellipsa.h>

#define MAX_ROWS 64
#define P 3

int main(int argc, char** argv) {
  if (argc != 2) {
    fprintf(stderr, "usage: %s DATA.csv\n", argv[0]);
    return 2;
  }
  FILE* in = fopen(argv[1], "r");
  if (!in) {
    fprintf(stderr, "cannot open %s\n", argv[1]);
    return 2;
  }
  static double data[MAX_ROWS][P];
  char line[512];
  int64_t n = 0;
  int header = 1;
  while (fgets(line, sizeof line, in)) {
    if (header) { /* the column names */
      header = 0;
      continue;
    }
    if (line[0] == '\n' || line[0] == '\0') continue;
    if (n == MAX_ROWS) {
      fprintf(stderr, "more than %d rows\n", MAX_ROWS);
      fclose(in);
      return 2;
    }
    char* cursor = line;
    for (int j = 0; j < P; ++j) {
      char* end = NULL;
      data[n][j] = strtod(cursor, &end);
      if (end == cursor) {
        fprintf(stderr, "row %lld, column %d: not a number\n", (long long)n + 1, j + 1);
        fclose(in);
        return 2;
      }
      cursor = end + (*end == ',');
    }
    ++n;
  }
  fclose(in);

  printf("version %s %d\n", ellipsa_version(), ellipsa_version_number() == ELLIPSA_VERSION_NUMBER);

  ellipsa_fit_options* options = NULL;
  ellipsa_model* model = NULL;
  ellipsa_matrix x = ellipsa_matrix_row_major(&data[0][0], n, P);
  ellipsa_status s = ellipsa_fit_options_create(&options, ELLIPSA_METHOD_CLASSICAL);
  if (s == ELLIPSA_OK) s = ellipsa_fit_options_set_divisor(options, ELLIPSA_DIVISOR_N_MINUS_1);
  if (s == ELLIPSA_OK) s = ellipsa_model_fit(&model, &x, options);
  double mean[P], cov[P * P];
  int64_t used = 0, dropped = 0;
  if (s == ELLIPSA_OK) s = ellipsa_model_component(mean, P, cov, P * P, NULL, model, 0);
  if (s == ELLIPSA_OK) s = ellipsa_model_rows(&used, &dropped, model);
  if (s != ELLIPSA_OK) {
    fprintf(stderr, "%s: %s\n", ellipsa_status_string(s), ellipsa_last_error());
  } else {
    printf("rows %lld\n", (long long)used);
    for (int j = 0; j < P; ++j) printf("mean %d %.17g\n", j, mean[j]);
    for (int i = 0; i < P; ++i)
      for (int j = 0; j < P; ++j) printf("cov %d %d %.17g\n", i, j, cov[i * P + j]);
  }
  ellipsa_model_destroy(model);
  ellipsa_fit_options_destroy(options);
  return s == ELLIPSA_OK ? 0 : 1;
}
