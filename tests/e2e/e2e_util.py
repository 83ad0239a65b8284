"""Helpers for the end-to-end tests: run the built tool, read CSV and JSON."""
import atexit
import csv
import io
import json
import os
import shutil
import subprocess
import tempfile

BIN = os.environ["ELLIPSA_BIN"]
SRC = os.environ["ELLIPSA_SOURCE_DIR"]
EXAMPLES = os.path.join(SRC, "examples")
REFERENCE = os.path.join(SRC, "tests", "reference")


def run(*args, stdin=None, check_code=None):
    """Runs ellipsa with args; returns (code, stdout, stderr)."""
    p = subprocess.run([BIN, *args], input=stdin, capture_output=True, text=True, timeout=600)
    if check_code is not None and p.returncode != check_code:
        raise AssertionError(f"ellipsa {' '.join(args)}: exit {p.returncode}, expected {check_code}\n"
                             f"stdout: {p.stdout[:2000]}\nstderr: {p.stderr[:2000]}")
    return p.returncode, p.stdout, p.stderr


def read_csv(path_or_text, from_text=False):
    f = io.StringIO(path_or_text) if from_text else open(path_or_text, newline="")
    with f:
        return list(csv.DictReader(f))


def scratch():
    """A scratch folder, removed when the test process ends (kept when
    ELLIPSA_KEEP_SCRATCH is set, to look at a failure's files)."""
    path = tempfile.mkdtemp(prefix="ellipsa-e2e-")
    if not os.environ.get("ELLIPSA_KEEP_SCRATCH"):
        atexit.register(shutil.rmtree, path, True)
    return path


def write(path, text):
    with open(path, "w", newline="") as f:
        f.write(text)
    return path


def filtered_csv(src, dst, keep):
    """Copies the header and the rows for which keep(row_dict) is true."""
    rows = read_csv(src)
    with open(src, newline="") as f:
        header = f.readline().rstrip("\n")
    with open(dst, "w", newline="") as f:
        f.write(header + "\n")
        names = header.split(",")
        for r in rows:
            if keep(r):
                f.write(",".join(r[n] for n in names) + "\n")
    return dst


class Checks:
    """Collects failed checks; finish() prints the count and exits 1 if any failed."""

    def __init__(self):
        self.failures = []

    def __call__(self, cond, what):
        if not cond:
            self.failures.append(what)
            print("FAIL:", what)

    def finish(self):
        import sys
        print(f"{len(self.failures)} failures")
        sys.exit(1 if self.failures else 0)
