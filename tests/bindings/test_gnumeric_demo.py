#!/usr/bin/env python3
"""The demo workbook (examples/moulding_line_screen.gnumeric, invented data)
recalculates headless in Gnumeric and agrees with the batch tool on the same
data: the new batch's flags with `ellipsa fit` + `ellipsa score`, the shift's
flags with `ellipsa screen`, the regime labels with `ellipsa cluster`. The
committed workbook must also equal what examples/make_demo_workbook.py writes.

Environment: ELLIPSA_GNUMERIC_PLUGIN_DIR, ELLIPSA_SOURCE_DIR, ELLIPSA_BIN.
Exit 77 (skipped) when ssconvert is not installed.
"""
import csv
import os
import shutil
import subprocess
import sys
import tempfile
import time

PLUGIN_DIR = os.environ["ELLIPSA_GNUMERIC_PLUGIN_DIR"]
SRC = os.environ["ELLIPSA_SOURCE_DIR"]
BIN = os.environ["ELLIPSA_BIN"]
EXAMPLES = os.path.join(SRC, "examples")
BOOK = os.path.join(EXAMPLES, "moulding_line_screen.gnumeric")
SEED = "1"  # the workbook's seed (examples/make_demo_workbook.py)
FAILURES = []


def check(ok, what):
    if not ok:
        FAILURES.append(what)
        print("FAIL:", what)


def read(path):
    with open(path, newline="") as f:
        return list(csv.reader(f))


def mould_rows(name, mould, out):
    with open(os.path.join(EXAMPLES, name), newline="") as f:
        lines = f.read().splitlines()
    keep = [lines[0]] + [line for line in lines[1:] if mould is None or line.split(",")[2] == mould]
    with open(out, "w") as f:
        f.write("\n".join(keep) + "\n")
    return out


def tool(*args):
    p = subprocess.run([BIN, *args], capture_output=True, text=True, timeout=600)
    if p.returncode != 0:
        raise SystemExit("ellipsa %s: exit %d\n%s" % (" ".join(args), p.returncode, p.stderr))
    return p


def column(rows, name):
    j = rows[0].index(name)
    return [r[j] for r in rows[1:]]


def main():
    ssconvert = shutil.which("ssconvert")
    if ssconvert is None:
        print("SKIPPED: Gnumeric's ssconvert is not installed (make deps installs gnumeric)")
        return 77
    work = tempfile.mkdtemp(prefix="ellipsa-demo-book-")
    regenerated = os.path.join(work, "regenerated.gnumeric")
    subprocess.run([sys.executable, os.path.join(EXAMPLES, "make_demo_workbook.py"), regenerated], check=True)
    with open(regenerated, "rb") as a, open(BOOK, "rb") as b:
        check(a.read() == b.read(), "the committed workbook is what make_demo_workbook.py writes (rerun it)")

    env = {"PATH": "/usr/bin:/bin", "HOME": work, "GNUMERIC_PLUGIN_PATH": os.path.dirname(PLUGIN_DIR)}
    start = time.monotonic()
    subprocess.run([ssconvert, "-S", "--recalc", BOOK, os.path.join(work, "sheet_%n.csv")], env=env,
                   capture_output=True, timeout=600)
    seconds = time.monotonic() - start
    sheets = [read(os.path.join(work, "sheet_%d.csv" % k)) for k in range(4)]
    new, shift, regimes = sheets[0], sheets[2], sheets[3]

    # New batch against the reference: fit + score with the batch tool.
    ref_a = mould_rows("moulding_reference.csv", "A", os.path.join(work, "ref_A.csv"))
    new_a = mould_rows("moulding_new_batch.csv", "A", os.path.join(work, "new_A.csv"))
    model = os.path.join(work, "model.json")
    tool("fit", "--method", "mcd", "--seed", SEED, "--quiet", ref_a, "-o", model)
    scored = os.path.join(work, "scored.csv")
    tool("score", model, new_a, "-o", scored, "--quiet")
    cli = read(scored)
    sheet_flags, cli_flags = column(new, "flag"), column(cli, "flag")
    check(sheet_flags == cli_flags, "new batch: sheet flags equal `ellipsa score` flags (%d vs %d flagged)"
          % (sheet_flags.count("1"), cli_flags.count("1")))
    for s, c in zip(column(new, "distance"), column(cli, "sq_distance")):
        check(abs(float(s) - float(c)) <= 1e-9 * max(1.0, abs(float(c))), "distance %s vs %s" % (s, c))
    planted = [(f, p) for f, p in zip(sheet_flags, column(new, "planted fault (invented)")) if p]
    check(len(planted) == 3 and all(f == "1" for f, _ in planted), "the three planted faults are flagged")

    # One shift screened against itself: `ellipsa screen`.
    line_a = mould_rows("moulding_line.csv", "A", os.path.join(work, "line_A.csv"))
    screened = os.path.join(work, "screened.csv")
    tool("screen", line_a, "--method", "mcd", "--seed", SEED, "-o", screened, "--quiet")
    cli = read(screened)
    check(column(shift, "flag") == column(cli, "flag"), "shift: sheet flags equal `ellipsa screen` flags")

    # Regimes of the whole reference period: `ellipsa cluster`.
    ref_all = os.path.join(EXAMPLES, "moulding_reference.csv")
    clustered = os.path.join(work, "clustered.csv")
    tool("cluster", ref_all, "--components", "1-3", "--structure", "full", "--seed", SEED,
         "--scores", clustered, "--quiet")
    cli = read(clustered)
    sheet_regime = [int(x) for x in column(regimes, "regime")]
    cli_regime = [int(x) for x in column(cli, "component")]
    offset = sheet_regime[0] - cli_regime[0]  # the tool may count from 0 or 1
    check(offset in (0, 1) and all(s - c == offset for s, c in zip(sheet_regime, cli_regime)),
          "regimes: sheet labels equal `ellipsa cluster` components")
    check(len(set(zip(column(regimes, "mould"), sheet_regime))) == 2, "each mould is one regime")

    if FAILURES:
        print("%d failed checks" % len(FAILURES))
        return 1
    print("demo workbook: %d new-batch flags, %d shift flags, regimes as the batch tool; one headless "
          "recalculation of the workbook (4 sheets) took %.2f s" % (sheet_flags.count("1"),
                                                                   column(shift, "flag").count("1"), seconds))
    shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
