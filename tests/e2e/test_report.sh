#!/usr/bin/env bash
# End-to-end test of `ellipsa report` on the invented demo data (examples/).
#
#   test_report.sh ELLIPSA EXAMPLES_DIR TEST_DIR page    the page itself, robust and mixture models
#   test_report.sh ELLIPSA EXAMPLES_DIR TEST_DIR render  the page drawn by headless Chromium
#
# `render` exits 77 (skipped) when no chromium is installed, and only then.
set -uo pipefail
bin=$1
examples=$2
here=$3
mode=$4
py=/usr/bin/python3
check="$py $here/check_report.py"
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT
failures=0
fail() {
  echo "FAIL: $*"
  failures=$((failures + 1))
}
# Runs a command that must exit with the given code.
expect_exit() {
  local want=$1
  shift
  "$@" >"$scratch/out.txt" 2>"$scratch/err.txt"
  local got=$?
  if [ "$got" -ne "$want" ]; then
    fail "exit $got (expected $want) from: $* -- $(head -c 400 "$scratch/err.txt")"
    return 1
  fi
}

# Mould A of the line data, and a robust (MCD) model of it.
grep -E '^(shot_id|A-)' "$examples/moulding_line.csv" >"$scratch/line_A.csv"
expect_exit 0 "$bin" fit --method mcd --seed 1 "$scratch/line_A.csv" -o "$scratch/model_A.json" --quiet ||
  { echo "cannot go on without a model"; exit 1; }
# The planted mould A faults, as lines of the filtered file (header is line 1).
fault_lines_A=$(tail -n +2 "$examples/moulding_line_faults.csv" | cut -d, -f1 | grep '^A-' |
  while read -r id; do grep -n "^$id," "$scratch/line_A.csv" | cut -d: -f1; done | paste -sd, -)
[ "$(echo "$fault_lines_A" | tr ',' '\n' | grep -c .)" -eq 7 ] || fail "expected 7 planted mould A faults, found '$fault_lines_A'"

if [ "$mode" = render ]; then
  browser=$(command -v chromium || command -v chromium-browser || true)
  if [ -z "$browser" ]; then
    echo "SKIP: chromium is not installed (Debian package 'chromium'), so the page was not rendered."
    exit 77
  fi
  expect_exit 0 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" -o "$scratch/report.html" --quiet
  profile=$(mktemp -d)
  timeout 180 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync --user-data-dir="$profile" \
    --screenshot="$scratch/report.png" --window-size=1200,3000 "file://$scratch/report.html" >"$scratch/chromium.log" 2>&1
  rm -rf "$profile"
  if [ ! -s "$scratch/report.png" ]; then
    fail "chromium wrote no screenshot: $(tail -n 5 "$scratch/chromium.log")"
  else
    $check png "$scratch/report.png" || fail "the screenshot does not show the report"
  fi
  if [ "$failures" -eq 0 ]; then echo "ok: the report renders"; exit 0; fi
  exit 1
fi

# 1. Robust model on the rows it was fitted on: every planted fault is flagged.
if expect_exit 0 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" -o "$scratch/report_A.html" --json; then
  cp "$scratch/out.txt" "$scratch/summary_A.json"
  $check page "$scratch/report_A.html" --min-svg 4 --lines "$fault_lines_A" --json "$scratch/summary_A.json" ||
    fail "robust model page"
  grep -q '>mcd<' "$scratch/report_A.html" || fail "the page does not name the method"
  grep -q '>h<' "$scratch/report_A.html" || fail "the page does not give the MCD subset size h"
fi

# 2. Mixture over both moulds: the model choice plot, and the plain faults flagged.
expect_exit 0 "$bin" fit --method mixture --components 1-4 --seed 1 "$examples/moulding_line.csv" \
  -o "$scratch/mixture.json" --quiet
if expect_exit 0 "$bin" report "$scratch/mixture.json" "$examples/moulding_line.csv" -o "$scratch/mixture.html" --json; then
  cp "$scratch/out.txt" "$scratch/summary_mix.json"
  # melt_spike (data row 499) and cycle_stall (502): lines 500 and 503.
  $check page "$scratch/mixture.html" --min-svg 5 --lines 500,503 --json "$scratch/summary_mix.json" ||
    fail "mixture page"
  # BIC chooses K = 3: the two moulds and a small component of planted faults
  # (docs/robustness.md, "Numerical extremes"); every planted fault has a low
  # density under it (measured: the highest, -4.19, against the cutoff -3.03).
  grep -q 'chosen model: K = 3' "$scratch/mixture.html" || fail "the mixture page does not mark the chosen K = 3"
  grep -q 'component 3' "$scratch/mixture.html" || fail "the mixture page does not colour components"
  planted=$(tail -n +2 "$examples/moulding_line_faults.csv" | cut -d, -f2 | while read -r r; do echo $((r + 1)); done)
  found=0
  for line in $planted; do grep -q "data-line=\"$line\"" "$scratch/mixture.html" && found=$((found + 1)); done
  [ "$found" -eq 12 ] || fail "the mixture page flags only $found of the 12 planted faults"
fi

# 3. Text from the data is escaped: an id with markup and a byte that is not UTF-8.
sed -e 's/^A-0300,/x<script>alert(1)<\/script>\&"y\xff,/' "$scratch/line_A.csv" >"$scratch/hostile.csv"
if expect_exit 0 "$bin" report "$scratch/model_A.json" "$scratch/hostile.csv" -o "$scratch/hostile.html" \
  --title '<b>Title & "quotes"</b>'; then
  $check page "$scratch/hostile.html" --min-svg 4 --lines "$fault_lines_A" || fail "page with hostile text"
  grep -q 'x&lt;script&gt;alert(1)&lt;/script&gt;&amp;&quot;y' "$scratch/hostile.html" ||
    fail "the hostile id is not shown escaped"
  grep -q '&lt;b&gt;Title &amp; &quot;quotes&quot;&lt;/b&gt;' "$scratch/hostile.html" || fail "the title is not escaped"
fi

# 4. Options: scatter-plot matrix variables, level, and usage errors.
if expect_exit 0 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" -o "$scratch/cols.html" \
  --columns cap_mass_g,cap_diameter_mm --level 0.99 --quiet; then
  grep -q 'The variables named with --columns' "$scratch/cols.html" || fail "--columns not used"
  grep -q '99% tolerance ellipse' "$scratch/cols.html" || fail "--level 0.99 not used for the ellipses"
  [ ! -s "$scratch/out.txt" ] && [ ! -s "$scratch/err.txt" ] || fail "--quiet printed something"
fi
expect_exit 2 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" --json
expect_exit 2 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" -o "$scratch/x.html" --columns no_such_column
expect_exit 2 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" -o "$scratch/x.html" --columns cap_mass_g
expect_exit 2 "$bin" report "$scratch/model_A.json" "$scratch/line_A.csv" -o "$scratch/x.html" --level 1.5
expect_exit 3 "$bin" report "$scratch/line_A.csv" "$scratch/line_A.csv" -o "$scratch/x.html"
[ ! -e "$scratch/x.html" ] || fail "a failed report left an output file"

# 5. No classical fit possible (more variables than rows): the page says why and goes on.
if expect_exit 0 "$bin" fit --method mrcd "$examples/thermocouple_wide.csv" -o "$scratch/wide.json" --quiet &&
  expect_exit 0 "$bin" report "$scratch/wide.json" "$examples/thermocouple_wide.csv" -o "$scratch/wide.html" --quiet; then
  grep -q 'No distance-distance plot: a classical fit of these rows was not possible' "$scratch/wide.html" ||
    fail "the wide page does not explain the missing distance-distance plot"
  $check page "$scratch/wide.html" --min-svg 2 || fail "wide page"
fi

if [ "$failures" -eq 0 ]; then
  echo "ok: every report check held"
  exit 0
fi
echo "$failures report checks failed"
exit 1
