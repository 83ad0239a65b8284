#!/usr/bin/env bash
# ThreadSanitizer run of the C interface's contract tests, the concurrency test
# above all (tests/capi/test_concurrency.cpp): many threads fitting, scoring and
# failing at once through the shared library. Any data race fails the run.
#
#   scripts/run-tsan.sh [BUILD_DIR]      (default: build-tsan)
#
# Builds only what the run needs (the ellipsa library, instrumented together
# with the core it links, and the capi test executables), so it fits CI on two
# cores. OpenBLAS is not instrumented: its own worker threads would look like
# unsynchronised memory traffic to TSan, so it runs single-threaded here (our
# threads may still call into it at once, which is what we test).
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
build=${1:-$root/build-tsan}
jobs=${JOBS:-2}

cmake -S "$root" -B "$build" -DELLIPSA_TSAN=ON -DELLIPSA_BENCHMARKS=OFF \
  -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
# core_test_parallel: the thread team itself (core/parallel.hpp).
targets=(ellipsa core_test_parallel)
for src in "$root"/tests/capi/test_*.cpp; do
  targets+=("capi_$(basename "$src" .cpp)")
done
cmake --build "$build" -j"$jobs" --target "${targets[@]}"

export OPENBLAS_NUM_THREADS=1
export TSAN_OPTIONS="halt_on_error=1 abort_on_error=1 second_deadlock_stack=1 history_size=4${TSAN_OPTIONS:+ $TSAN_OPTIONS}"
if [ -s "$root/tests/tsan.supp" ]; then
  export TSAN_OPTIONS="$TSAN_OPTIONS suppressions=$root/tests/tsan.supp"
fi

# The concurrency test first and on its own, so its result is the first thing
# read; then every other capi contract test under TSan as well. The white-box
# guard test links a static twin of the library and is not built here.
echo "== TSan: capi_test_concurrency"
"$build/tests/capi_test_concurrency"
echo "== TSan: core_test_parallel"
"$build/tests/core_test_parallel"
echo "== TSan: all capi contract tests"
(cd "$build" && ctest --output-on-failure -j"$jobs" -L capi -E 'capi_internal_guard')
