#!/usr/bin/env bash
# Batch throughput of the CLI on a generated CSV (default 1 GB, 10 numeric
# columns): MB/s and peak memory of a streaming classical fit and of scoring,
# and the split between reading and computing. Writes a short report to stdout.
#   scripts/bench-batch-throughput.sh [BUILD_DIR] [SIZE_MB]
set -euo pipefail
build=${1:-build}
size_mb=${2:-1024}
bin="$build/bin/ellipsa"
work=$(mktemp -d "${TMPDIR:-/tmp}/ellipsa-throughput.XXXXXX")
trap 'rm -rf "$work"' EXIT

# A 16 MB block of random rows (seeded), repeated to the size asked for: the
# values repeat, the parsing and arithmetic work per byte does not change.
/usr/bin/python3 - "$work/block.csv" <<'PY'
import random, sys
rng = random.Random(20261201)
with open(sys.argv[1], "w") as f:
    f.write(",".join(f"x{j}" for j in range(1, 11)) + "\n")
    size = 0
    while size < 16 * 2**20:
        common = rng.gauss(0, 1)
        line = ",".join(f"{100 + (j + 1) * (0.6 * common + rng.gauss(0, 1)):.6f}" for j in range(10)) + "\n"
        size += len(line)
        f.write(line)
PY
{
  cat "$work/block.csv"
  body=$(mktemp "$work/body.XXXX")
  tail -n +2 "$work/block.csv" > "$body"
  for _ in $(seq 2 $((size_mb / 16))); do cat "$body"; done
} > "$work/big.csv"
bytes=$(stat -c %s "$work/big.csv")
rows=$(($(wc -l < "$work/big.csv") - 1))
mb=$(awk -v b="$bytes" 'BEGIN {printf "%.1f", b / 1e6}')

measure() {  # label, input bytes, command...: prints seconds, MB/s and peak resident MB
  local label=$1 in_bytes=$2; shift 2
  /usr/bin/time -f "%e %M" -o "$work/time.txt" "$@" > /dev/null
  read -r secs kb < "$work/time.txt"
  awk -v l="$label" -v s="$secs" -v k="$kb" -v b="$in_bytes" \
    'BEGIN {printf "%-34s %7.2f s  %8.1f MB/s  peak %7.1f MB\n", l, s, b / 1e6 / s, k / 1024}'
  echo "$secs" > "$work/last.txt"
}

echo "input: $mb MB, $rows rows x 10 columns (OPENBLAS_NUM_THREADS=${OPENBLAS_NUM_THREADS:-unset})"
measure "fit --method classical (stream)" "$bytes" "$bin" fit --method classical --quiet "$work/big.csv" -o "$work/model.json"
fit_s=$(cat "$work/last.txt")
measure "fit --method ledoit-wolf (stream)" "$bytes" "$bin" fit --method ledoit-wolf --quiet "$work/big.csv" -o "$work/lw.json"
measure "score to /dev/null (read, score, format)" "$bytes" "$bin" score --quiet "$work/model.json" "$work/big.csv" -o -
null_s=$(cat "$work/last.txt")
measure "score (read, score, write the file)" "$bytes" "$bin" score --quiet "$work/model.json" "$work/big.csv" -o "$work/scored.csv"
score_s=$(cat "$work/last.txt")
out_bytes=$(stat -c %s "$work/scored.csv")
out_mb=$(awk -v b="$out_bytes" 'BEGIN {printf "%.1f", b / 1e6}')
echo "scored output: $out_mb MB (computed columns at the default 10 significant digits)"
# The disk's own speed for the same bytes: a copy of the scored file (from the
# page cache), without and with fsync.
for sync in "" "conv=fsync"; do
  rm -f "$work/copy.csv"
  start=$(date +%s.%N)
  dd if="$work/scored.csv" of="$work/copy.csv" bs=64k $sync 2>/dev/null
  end=$(date +%s.%N)
  awk -v b="$out_bytes" -v s="$start" -v e="$end" -v l="${sync:-no sync}" \
    'BEGIN {printf "disk: writing the same %.1f MB with dd (%s): %.2f s, %.0f MB/s\n", b / 1e6, l, e - s, b / 1e6 / (e - s)}'
done
rm -f "$work/copy.csv"
# On more than one thread reading, scoring and writing overlap
# (bindings-c/cli/score_stream.hpp), so the split comes from one thread.
measure "score, one thread (write the file)" "$bytes" "$bin" score --threads 1 --quiet "$work/model.json" "$work/big.csv" -o "$work/scored.csv"
one_s=$(cat "$work/last.txt")
measure "score, one thread, to /dev/null" "$bytes" "$bin" score --threads 1 --quiet "$work/model.json" "$work/big.csv" -o -
one_null_s=$(cat "$work/last.txt")
awk -v f="$fit_s" -v n="$one_null_s" -v s="$one_s" 'BEGIN {
  printf "split of the one-thread score time: reading and parsing ~%.0f%% (the streaming fit), scoring and formatting ~%.0f%%, writing to disk ~%.0f%%\n",
         100 * f / s, 100 * (n - f) / s, 100 * (s - n) / s }'
measure "score --digits exact (write the file)" "$bytes" "$bin" score --quiet --digits exact "$work/model.json" "$work/big.csv" -o "$work/scored.csv"
# Peak memory must not grow with the file: the same on a file a quarter as long.
head -n $((rows / 4 + 1)) "$work/big.csv" > "$work/quarter.csv"
measure "score, a quarter of the file" "$(stat -c %s "$work/quarter.csv")" "$bin" score --quiet "$work/model.json" "$work/quarter.csv" -o "$work/scored_q.csv"
