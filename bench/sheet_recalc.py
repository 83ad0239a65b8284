#!/usr/bin/env python3
"""Recalculation time of sheet functions in Gnumeric, against the same work
through the batch tool, measured in the same run (median of REPEATS runs).

    bench/sheet_recalc.py BUILD_DIR [ROWS]      (default 20000 rows x 6 columns)

Cases:
  demo     examples/moulding_line_screen.gnumeric (4 sheets, 16 array formulas)
  empty    a workbook with ROWS x 6 readings and no formula (host load + write)
  scored   the same with one array formula =ELL.DIST2(A2:F<n+1>) (robust, MCD)
  batch    `ellipsa screen` on the same readings as CSV (fit + score + write)
The sheet's own cost is scored - empty; the ratio compares it with batch.
"""
import os
import random
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

REPEATS = 3


def timed(cmd, env=None):
    runs = []
    for _ in range(REPEATS):
        t = time.monotonic()
        subprocess.run(cmd, env=env, capture_output=True, check=False, timeout=1800)
        runs.append(time.monotonic() - t)
    return statistics.median(runs)


def main():
    build = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else "build")
    rows = int(sys.argv[2]) if len(sys.argv) > 2 else 20000
    src = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    sys.path.insert(0, os.path.join(src, "bindings-c", "gnumeric"))
    import workbook_xml as wb
    ssconvert = shutil.which("ssconvert")
    if ssconvert is None:
        print("sheet_recalc: Gnumeric is not installed; skipped")
        return 0
    work = tempfile.mkdtemp(prefix="ellipsa-sheet-bench-")
    env = {"PATH": "/usr/bin:/bin", "HOME": work, "GNUMERIC_PLUGIN_PATH": os.path.join(build, "gnumeric"),
           "OPENBLAS_NUM_THREADS": "1"}
    rng = random.Random(3)
    data = []
    for _ in range(rows):
        z = rng.gauss(0, 1)
        data.append([round(256 * (50 + (j + 1) * (0.6 * z + rng.gauss(0, 1)))) / 256 for j in range(6)])
    names = ["x%d" % (j + 1) for j in range(6)]
    for with_formula in (False, True):
        s = wb.Sheet("S")
        s.put_row(0, 0, names)
        for i, r in enumerate(data):
            s.put_row(1 + i, 0, r)
        if with_formula:
            s.array(1, 7, rows, 1, "=ELL.DIST2(A2:F%d)" % (rows + 1))
        wb.write(os.path.join(work, "scored.gnumeric" if with_formula else "empty.gnumeric"), [s])
    with open(os.path.join(work, "data.csv"), "w") as f:
        f.write(",".join(names) + "\n")
        for r in data:
            f.write(",".join(repr(v) for v in r) + "\n")
    out = os.path.join(work, "out.csv")
    demo = timed([ssconvert, "-S", "--recalc", os.path.join(src, "examples", "moulding_line_screen.gnumeric"),
                  os.path.join(work, "demo_%n.csv")], env)
    empty = timed([ssconvert, "--recalc", os.path.join(work, "empty.gnumeric"), out], env)
    scored = timed([ssconvert, "--recalc", os.path.join(work, "scored.gnumeric"), out], env)
    batch = timed([os.path.join(build, "bin", "ellipsa"), "screen", os.path.join(work, "data.csv"), "--quiet",
                   "-o", os.path.join(work, "screened.csv")], dict(env))
    print("sheet_recalc (median of %d runs, OPENBLAS_NUM_THREADS=1)" % REPEATS)
    print("  demo workbook, one headless recalculation: %.2f s" % demo)
    print("  %d x 6 readings, load + recalculate + write, no formula: %.2f s" % (rows, empty))
    print("  the same with =ELL.DIST2 over all rows:               %.2f s (sheet's own cost %.2f s)"
          % (scored, scored - empty))
    print("  ellipsa screen on the same readings (CSV):            %.2f s" % batch)
    print("  sheet's own cost / batch tool: %.2f" % ((scored - empty) / batch))
    shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
