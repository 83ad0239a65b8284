#!/usr/bin/env bash
# Short libFuzzer runs of every fuzz target, for CI:
#   scripts/run-fuzz.sh [build-dir] [seconds-per-target]
# The targets are compiled with clang (libFuzzer + ASan + UBSan) against the
# shared library of an ordinary build (build-dir/lib/libellipsa.so), so CI
# needs no second full build: the table I/O sources are compiled in (and
# instrumented), the C interface is called as a foreign caller calls it. Each
# target starts from a copy of its committed corpus (tests/fuzz/corpus/<name>)
# and runs for the given seconds; a crash, a failed oracle or one input
# running longer than 30 s (a hang: Boost's inverse incomplete beta once
# looped for half an hour on huge shapes) fails the script (the input is left
# in build-dir/fuzz-ci/). Coverage-guided runs inside the
# library use the fuzzing build (-DELLIPSA_FUZZ=ON, DEVELOPERS.md).
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
build="$(cd "${1:-$root/build}" && pwd)"
seconds="${2:-45}"
out="$build/fuzz-ci"
mkdir -p "$out"
flags=(-std=c++20 -O1 -g -fsanitize=fuzzer,address,undefined -fno-sanitize-recover=undefined)

clang++ "${flags[@]}" -I"$root/bindings-c/tableio" "$root/tests/fuzz/fuzz_csv_reader.cpp" \
  "$root"/bindings-c/tableio/*.cpp -o "$out/fuzz_csv_reader"
for t in model_load fit_score accumulator sheet_evaluate; do
  clang++ "${flags[@]}" -I"$root/capi/include" "$root/tests/fuzz/fuzz_$t.cpp" -o "$out/fuzz_$t" -Wl,--export-dynamic-symbol=xerbla_ \
    -L"$build/lib" -lellipsa -Wl,-rpath,"$build/lib"
done

status=0
for t in csv_reader model_load fit_score accumulator sheet_evaluate; do
  corpus="$t"
  [ "$t" = csv_reader ] && corpus=csv
  work="$(mktemp -d)"
  cp -r "$root/tests/fuzz/corpus/$corpus/." "$work/"
  extra=()
  [ "$t" = model_load ] && extra=(-dict="$root/tests/fuzz/model_format.dict" -max_len=8192)
  if OPENBLAS_NUM_THREADS=1 "$out/fuzz_$t" "${extra[@]}" -max_total_time="$seconds" -timeout=30 \
       -artifact_prefix="$out/$t-" "$work" > "$out/$t.log" 2>&1; then
    echo "fuzz_$t: $(grep -E '^#[0-9]+' "$out/$t.log" | tail -n 1 | awk '{print $1}' | tr -d '#') executions in ${seconds} s, no finding"
  else
    echo "fuzz_$t: FINDING"; tail -n 40 "$out/$t.log"; status=1
  fi
  rm -rf "$work"
done
exit $status
