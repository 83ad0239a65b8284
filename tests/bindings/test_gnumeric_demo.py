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

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import demo_expectations as expectations  # noqa: E402

PLUGIN_DIR = os.environ["ELLIPSA_GNUMERIC_PLUGIN_DIR"]
SRC = os.environ["ELLIPSA_SOURCE_DIR"]
BIN = os.environ["ELLIPSA_BIN"]
EXAMPLES = os.path.join(SRC, "examples")
BOOK = os.path.join(EXAMPLES, "moulding_line_screen.gnumeric")
from sheet_host_cases import FAILURES, check  # noqa: E402



def read(path):
    with open(path, newline="") as f:
        return list(csv.reader(f))


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

    summary = expectations.check_demo({"NewBatch": sheets[0], "Shift": sheets[2], "Regimes": sheets[3]}, BIN,
                                      EXAMPLES, work, check)
    if FAILURES:
        print("%d failed checks" % len(FAILURES))
        return 1
    print("demo workbook (Gnumeric): %s; one headless recalculation of the workbook (4 sheets) took %.2f s"
          % (summary, seconds))
    shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
