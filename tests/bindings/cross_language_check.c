/* Model files written by the Python, R and C# bindings (their smoke tests put
 * them in ELLIPSA_CROSS_DIR) load through the C interface and save back to the
 * same bytes: one format, whatever language wrote it. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ellipsa.h"

static char* slurp(const char* path, long* size) {
  FILE* f = fopen(path, "rb");
  if (!f) return NULL;
  fseek(f, 0, SEEK_END);
  *size = ftell(f);
  fseek(f, 0, SEEK_SET);
  char* buf = malloc((size_t)*size + 1);
  if (buf && fread(buf, 1, (size_t)*size, f) != (size_t)*size) {
    free(buf);
    buf = NULL;
  }
  fclose(f);
  return buf;
}

int main(int argc, char** argv) {
  int failures = 0;
  for (int i = 1; i < argc; ++i) {
    long size = 0;
    char* text = slurp(argv[i], &size);
    if (!text) {
      printf("FAIL %s: missing (did its binding's smoke test run?)\n", argv[i]);
      ++failures;
      continue;
    }
    ellipsa_model* m = NULL;
    ellipsa_status s = ellipsa_model_load(&m, text, size);
    if (s != ELLIPSA_OK) {
      printf("FAIL %s: %s %s\n", argv[i], ellipsa_status_string(s), ellipsa_last_error());
      ++failures;
    } else {
      char* again = NULL;
      int64_t length = 0;
      s = ellipsa_model_save(&again, &length, m);
      if (s != ELLIPSA_OK || length != size || memcmp(again, text, (size_t)size) != 0) {
        printf("FAIL %s: saving the loaded model does not give the same bytes\n", argv[i]);
        ++failures;
      } else {
        printf("ok   %s: %ld bytes load and save back identically\n", argv[i], size);
      }
      ellipsa_text_free(again);
    }
    ellipsa_model_destroy(m);
    free(text);
  }
  return failures != 0;
}
