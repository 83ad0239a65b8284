#!/usr/bin/env bash
# Every benchmark of the project, one after the other, single-threaded BLAS so
# that ratios to the BLAS bounds compare like with like. Each Google Benchmark
# program reports its ratios to the bound it measures in the same run.
#   scripts/run-benchmarks.sh [BUILD_DIR]    (THROUGHPUT_MB=1024 for the batch test)
set -euo pipefail
build=${1:-build}
export OPENBLAS_NUM_THREADS=1
echo "== side by side: C interface, Python binding vs NumPy, R binding vs base R, 1 and 2 threads"
/usr/bin/python3 "$(dirname "$0")/../bench/side_by_side.py" "$build"
for b in "$build"/bench/bench_*; do
  [ -x "$b" ] || continue
  echo "== $(basename "$b")"
  "$b" --benchmark_repetitions=3 --benchmark_report_aggregates_only=true
done
echo "== batch throughput of the CLI"
"$(dirname "$0")/bench-batch-throughput.sh" "$build" "${THROUGHPUT_MB:-256}"
echo "== sheet functions in Gnumeric against the batch tool"
"$(dirname "$0")/../bench/sheet_recalc.py" "$build"
