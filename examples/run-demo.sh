#!/usr/bin/env bash
# The main job on the bundled (invented) demo data: screen the cap-moulding line
# per mould with the robust MCD fit, write the scored rows, and show the summary.
set -euo pipefail
build=${1:-build}
here=$(cd "$(dirname "$0")" && pwd)
top=$(cd "$here/.." && pwd)
# ELLIPSA_BIN and ELLIPSA_DEMO_OUT let the tests run the demo on a given binary
# into a scratch folder.
bin=${ELLIPSA_BIN:-"$top/$build/bin/ellipsa"}
out=${ELLIPSA_DEMO_OUT:-"$top/out/demo"}
mkdir -p "$out"

echo "ellipsa demo: invented data from a cap-moulding line (examples/README.md)"
echo
echo "\$ ellipsa screen examples/moulding_line.csv --by mould --seed 1 -o out/demo/moulding_line_scored.csv"
"$bin" screen "$here/moulding_line.csv" --by mould --seed 1 -o "$out/moulding_line_scored.csv"
echo
echo "Planted faults (examples/moulding_line_faults.csv), for comparison:"
tail -n +2 "$here/moulding_line_faults.csv" | awk -F, '{printf "  %-8s data row %-4s %s\n", $1, $2, $3}'
echo
echo "Reference period -> new batch: fit on clean shots of mould A, score the new batch's A shots"
grep -E '^(shot_id|A-)' "$here/moulding_reference.csv" > "$out/reference_A.csv"
grep -E '^(shot_id|A-)' "$here/moulding_new_batch.csv" > "$out/new_batch_A.csv"
"$bin" fit --method mcd --seed 1 "$out/reference_A.csv" -o "$out/mould_A_model.json"
"$bin" score "$out/mould_A_model.json" "$out/new_batch_A.csv" -o "$out/new_batch_A_scored.csv"
echo "Planted faults among the new batch's mould A shots (examples/moulding_new_batch_faults.csv), for comparison:"
grep '^A-' "$here/moulding_new_batch_faults.csv" | awk -F, '{printf "  %-8s %s\n", $1, $3}'
# The summary is counted from the files just written, never typed in: planted
# faults found, clean shots flagged, and what chance alone would give.
awk -F, -v faults="$here/moulding_new_batch_faults.csv" '
  BEGIN { while ((getline line < faults) > 0) { split(line, f, ","); if (f[1] ~ /^A-/) planted[f[1]] = 1 } }
  NR == 1 { for (j = 1; j <= NF; ++j) if ($j == "flag") col = j; next }
  { rows++; if ($1 in planted) { nf++; found += ($col == 1) } else { clean++; false_flags += ($col == 1) } }
  END {
    # Clean shots flagged by chance at level 0.975: Binomial(clean, 0.025).
    # The 99% upper bound is the smallest k with P(X <= k) >= 0.99.
    q = 0.025; pk = (1 - q) ^ clean; cdf = pk; k = 0
    while (cdf < 0.99) { pk *= (clean - k) / (k + 1) * q / (1 - q); k++; cdf += pk }
    printf "Summary: planted faults flagged %d of %d; clean shots flagged %d of %d", found, nf, false_flags, clean
    printf " (chance alone at level 0.975: about %.1f, and more than %d in fewer than 1%% of batches;", clean * q, k
    printf " docs/calibration.md)\n"
  }' "$out/new_batch_A_scored.csv"
echo
echo "Has the process moved? The new batch's mould A shots against the reference's, as batches"
"$bin" compare "$out/reference_A.csv" "$out/new_batch_A.csv" --html "$out/compare_mould_A.html"
echo
echo "Report: mould A's shots against a robust profile of mould A"
grep -E '^(shot_id|A-)' "$here/moulding_line.csv" > "$out/line_A.csv"
"$bin" fit --method mcd --seed 1 --quiet "$out/line_A.csv" -o "$out/line_A_model.json"
"$bin" report "$out/line_A_model.json" "$out/line_A.csv" -o "$out/report_mould_A.html" --title "Cap-moulding line (invented data), mould A"
echo
echo "Outputs:"
echo "  $out/moulding_line_scored.csv   every shot with its robust distance, p-value, flag and contributions"
echo "  $out/mould_A_model.json          the mould A profile (model file)"
echo "  $out/new_batch_A_scored.csv      the new batch's mould A shots scored against it"
echo "  $out/report_mould_A.html         the HTML report (open it in a browser)"
echo "  $out/compare_mould_A.html        the batch comparison as a page"
