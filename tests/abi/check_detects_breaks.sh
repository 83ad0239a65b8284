#!/usr/bin/env bash
# The ABI check must itself be able to fail: each incompatible edit of a copy of
# ellipsa.h below makes scripts/check-abi.sh fail, and each compatible edit (the
# ones docs/versioning.md allows in a MINOR release) keeps it passing. The tree
# is never touched; the library is the one just built.
set -euo pipefail
root=$(cd "$(dirname "$0")/../.." && pwd)
lib=$1
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
failures=0
passed=0

# try EXPECT DESCRIPTION SED-SCRIPT: EXPECT is "fail" or "pass".
try() {
  local expect=$1 what=$2 edit=$3
  mkdir -p "$work/h"
  sed -e "$edit" "$root/capi/include/ellipsa.h" > "$work/h/ellipsa.h"
  if cmp -s "$work/h/ellipsa.h" "$root/capi/include/ellipsa.h"; then
    echo "BROKEN TEST: the edit for '$what' changed nothing"; failures=$((failures + 1)); return
  fi
  local got=pass
  "$root/scripts/check-abi.sh" --record-only --header-dir "$work/h" "$lib" > "$work/log" 2>&1 || got=fail
  if [ "$got" = "$expect" ]; then
    echo "ok: $what -> $got ($(grep -m1 INCOMPATIBLE "$work/log" || grep -m1 -E 'added|grown|version' "$work/log" || echo 'no difference'))"
    passed=$((passed + 1))
  else
    echo "WRONG: $what -> $got, expected $expect"; cat "$work/log"; failures=$((failures + 1))
  fi
}

try fail "parameter type double -> float" \
  's/ellipsa_chi2_tail(double \*out, double x, double df)/ellipsa_chi2_tail(double *out, double x, float df)/'
try fail "parameter int32_t -> int64_t" \
  's/int32_t restarts);/int64_t restarts);/'
try fail "return type changed" \
  's/^ELLIPSA_API int32_t ellipsa_version_number(void);/ELLIPSA_API int64_t ellipsa_version_number(void);/'
try fail "function removed" \
  '/^ELLIPSA_API void ellipsa_text_free(char \*text);/d'
try fail "field inserted in the middle of ellipsa_scores" \
  's/^  double \*p_value; /  double *inserted; double *p_value; /'
try fail "field widened in ellipsa_candidate" \
  's/^  int32_t converged; /  int64_t converged; /'
try fail "ellipsa_matrix grown (it has no struct_size)" \
  's/^  int64_t col_stride; /  int64_t col_stride; int64_t reserved; /'
try fail "status code value changed" \
  's/^#define ELLIPSA_ERR_DATA 10 /#define ELLIPSA_ERR_DATA 15 /'
try fail "method id removed" \
  '/^#define ELLIPSA_METHOD_OAS 3 /d'
try fail "typedef changed" \
  's/^typedef int32_t ellipsa_status;/typedef int64_t ellipsa_status;/'
try fail "callback type changed" \
  's/typedef int (\*ellipsa_progress_fn)(const char \*stage, double fraction/typedef int (*ellipsa_progress_fn)(const char *stage, float fraction/'

try pass "new macro value" \
  's/^#define ELLIPSA_METHOD_MIXTURE 7 /#define ELLIPSA_METHOD_MIXTURE 7\n#define ELLIPSA_METHOD_FUTURE 8 /'
try pass "ellipsa_scores grown at the end with its initialiser" \
  's/^  int32_t \*low_density; /  int32_t *low_density; double *future_field; /; s/NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL }/NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL }/'
try pass "parameter renamed" \
  's/ellipsa_chi2_tail(double \*out, double x, double df)/ellipsa_chi2_tail(double *result, double value, double df)/'
try pass "minor version bumped" \
  's/^#define ELLIPSA_VERSION_MINOR 1\b/#define ELLIPSA_VERSION_MINOR 2/'

echo "$passed passed, $failures failed"
[ $failures = 0 ]
