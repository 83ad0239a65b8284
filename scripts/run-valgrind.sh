#!/usr/bin/env bash
# valgrind memcheck over the C interface's contract tests, run from an
# ordinary (uninstrumented) build: every invalid read or write, use of an
# uninitialised value in a branch, mismatched or double free, and every
# definitely lost block fails the run.
#
#   scripts/run-valgrind.sh [BUILD_DIR]      (default: build)
#
# The selection below is what fits about three minutes on the two shared
# cores of CI (memcheck runs the code 20-50 times slower): the contract tests
# of every entry point on small inputs. Measured on 2026-12-03: 47 s of CPU,
# 267 s of wall time on the shared development machine under load from other
# builds and a fuzzer; zero errors, zero definite leaks. Left out, with the reason: the
# concurrency and thread tests (valgrind serialises threads, so they test
# nothing there and take minutes; ThreadSanitizer covers them,
# scripts/run-tsan.sh), the large fits of the cancellation test (minutes under
# valgrind; the leak detector of the sanitizer build runs them), and tests
# that fit published data sets repeatedly (their entry points are covered
# here on small inputs). Each binary's time is printed.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
build=$(cd "${1:-$root/build}" && pwd)
jobs=${JOBS:-2}

# binary:gtest-filter
selection=(
  "capi_test_foundation:*"
  "capi_test_status_lists:*"
  "capi_test_messages:*"
  "capi_test_versioned_structs:*"
  "capi_test_fit_contract:*"
  "capi_test_score_contract:*"
  "capi_test_model_file:*"
  "capi_test_accumulator:*"
  "capi_test_accumulator_bytes:*"
  "capi_test_bad_input_catalogue:*"
  "capi_test_memory_ceiling:*"
  "capi_test_shape_contract:*"
  "capi_test_sheet_catalog:*"
)
targets=()
for entry in "${selection[@]}"; do targets+=("${entry%%:*}"); done
cmake --build "$build" -j"$jobs" --target "${targets[@]}" >/dev/null

export OPENBLAS_NUM_THREADS=1 ELLIPSA_THREADS=1
status=0
start_all=$SECONDS
for entry in "${selection[@]}"; do
  bin=${entry%%:*}
  filter=${entry#*:}
  start=$SECONDS
  log="$build/valgrind-$bin.log"
  if valgrind --error-exitcode=1 --leak-check=full --errors-for-leak-kinds=definite \
       --show-leak-kinds=definite --track-origins=no --num-callers=30 --quiet \
       --suppressions="$root/tests/valgrind.supp" \
       "$build/tests/$bin" --gtest_filter="$filter" --gtest_brief=1 >"$log" 2>&1; then
    echo "valgrind $bin: clean ($((SECONDS - start)) s)"
  else
    echo "valgrind $bin: ERRORS ($((SECONDS - start)) s); $log:"
    tail -n 60 "$log"
    status=1
  fi
done
echo "valgrind total: $((SECONDS - start_all)) s"
exit $status
