#!/usr/bin/env bash
# The demo's reference -> new batch story over many draws of the invented
# process: is the shipped batch's count of false flags typical? For each seed,
# regenerate the invented cap-moulding data (examples/generate_demo_data.py
# --seed s), fit mould A's reference shots, score the new batch's mould A shots
# with the model's default reference, and count planted faults flagged and
# clean shots flagged. Prints one line per method: mean clean flags, share of
# clean shots flagged, share of draws with at most 4 clean flags, and draws
# with all planted faults flagged. Figures are in docs/calibration.md.
#
#   scripts/calibration/demo_process_study.sh BUILD [SEEDS] [METHODS]
#   scripts/calibration/demo_process_study.sh build 100 "mcd classical"
set -euo pipefail
build=${1:-build}
seeds=${2:-100}
methods=${3:-"mcd classical"}
top=$(cd "$(dirname "$0")/../.." && pwd)
bin="$top/$build/bin/ellipsa"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

for method in $methods; do
  : > "$work/$method.counts"
done
for s in $(seq 1 "$seeds"); do
  d="$work/seed"
  rm -rf "$d"; mkdir -p "$d"
  python3 "$top/examples/generate_demo_data.py" --seed "$s" --out "$d" > /dev/null
  grep -E '^(shot_id|A-)' "$d/moulding_reference.csv" > "$d/ref.csv"
  grep -E '^(shot_id|A-)' "$d/moulding_new_batch.csv" > "$d/new.csv"
  for method in $methods; do
    seed_flag=()
    [ "$method" = mcd ] && seed_flag=(--seed 1)
    "$bin" fit --method "$method" "${seed_flag[@]}" --quiet "$d/ref.csv" -o "$d/model.json"
    # Exit 5 means rows were flagged, which is the expected outcome here.
    rc=0
    "$bin" score "$d/model.json" "$d/new.csv" -o "$d/scored.csv" > /dev/null 2> "$d/score.log" || rc=$?
    if [ "$rc" -ne 0 ] && [ "$rc" -ne 5 ]; then cat "$d/score.log" >&2; exit 1; fi
    awk -F, -v faults="$d/moulding_new_batch_faults.csv" '
      BEGIN { while ((getline line < faults) > 0) { split(line, f, ","); if (f[1] ~ /^A-/) planted[f[1]] = 1 } }
      NR == 1 { for (j = 1; j <= NF; ++j) if ($j == "flag") col = j; next }
      { if ($1 in planted) { nf++; found += ($col == 1) } else { clean++; ff += ($col == 1) } }
      END { print found, nf, ff, clean }' "$d/scored.csv" >> "$work/$method.counts"
  done
done
printf "%-10s %6s %18s %10s %16s %18s\n" method draws "mean clean flags" "rate" "P(clean <= 4)" "all faults found"
for method in $methods; do
  awk -v m="$method" '{ n++; ff += $3; clean += $4; le4 += ($3 <= 4); all += ($1 == $2) }
    END { printf "%-10s %6d %12.2f of %3d %9.2f%% %16.2f %14d of %d\n", m, n, ff / n, clean / n, 100 * ff / clean, le4 / n, all, n }' \
    "$work/$method.counts"
done
