#!/usr/bin/env python3
"""Real-host test of the Gnumeric plugin: a workbook with every catalog
function is recalculated headless by Gnumeric's own ssconvert, and every
computed cell is compared with the same computation through the C interface:
bit for bit with ellipsa_sheet_evaluate() (the bridge, called here in-process
through ctypes), and for the screening functions also with the ordinary fit
and score calls (the Python binding). Blank, text and error cells, misspelt
options, shapes that disagree and a missing library are checked too.

Host facts (Gnumeric 1.12.55): cells are long doubles, so test readings are
multiples of 1/256 (a decimal like 10.1234 would reach the plugin rounded
twice); the CSV export prints 20 significant digits, so float() of a cell
gives the double back exactly; inside an array result an
error can only show as #NUM!; a plugin that fails to load still exits 0, so
values are checked, never the exit status.

Environment: ELLIPSA_GNUMERIC_PLUGIN_DIR (the built plugin folder),
ELLIPSA_SOURCE_DIR. Exit 77 (skipped) when ssconvert is not installed.
"""
import csv
import json
import os
import shutil
import struct
import subprocess
import sys
import tempfile

PLUGIN_DIR = os.environ["ELLIPSA_GNUMERIC_PLUGIN_DIR"]
SRC = os.environ["ELLIPSA_SOURCE_DIR"]
sys.path[:0] = [PLUGIN_DIR, os.path.join(SRC, "bindings-c", "gnumeric"), os.path.join(SRC, "bindings-c", "python"),
                os.path.dirname(os.path.abspath(__file__))]
import ellipsa_sheet as bridge  # noqa: E402
import workbook_xml as wb  # noqa: E402
import sheet_host_cases as cases  # noqa: E402

SSCONVERT = shutil.which("ssconvert")
from sheet_host_cases import FAILURES, check  # noqa: E402



def recalc(book, plugin_parent, out_csv):
    """ssconvert --recalc in a clean environment (no DISPLAY, scratch HOME)."""
    home = tempfile.mkdtemp(prefix="ellipsa-gnumeric-home-")
    env = {"PATH": "/usr/bin:/bin", "HOME": home, "GNUMERIC_PLUGIN_PATH": plugin_parent, "OPENBLAS_NUM_THREADS": "1"}
    try:
        p = subprocess.run([SSCONVERT, "--recalc", book, out_csv], env=env, capture_output=True, text=True,
                           timeout=600)
    finally:
        shutil.rmtree(home, ignore_errors=True)
    if not os.path.exists(out_csv):
        raise SystemExit("ssconvert wrote nothing (exit %d): %s" % (p.returncode, p.stderr[-2000:]))
    with open(out_csv, newline="") as f:
        rows = list(csv.reader(f))
    return rows, p


def cell(rows, r, c):
    return rows[r][c] if r < len(rows) and c < len(rows[r]) else ""


COMPARE = cases.Comparison()


def expect_block(rows, r0, c0, expected, what):
    """expected: list of rows from the bridge (float, str, None or CellError)."""
    single = len(expected) == 1 and len(expected[0]) == 1
    for i, erow in enumerate(expected):
        scale = max([abs(v) for v in erow if isinstance(v, float)] + [0.0])
        for j, e in enumerate(erow):
            got = cell(rows, r0 + i, c0 + j)
            where = "%s cell (%d, %d): host %r, expected %r" % (what, i, j, got, e)
            if isinstance(e, bridge.CellError):
                check(got == (bridge.ERROR_TEXT[e.code] if single else "#NUM!"), where)
            elif e is None:
                check(got == "", where)
            elif isinstance(e, str):
                check(got == e, where)
            else:
                try:
                    check(COMPARE(float(got), e, scale), where)
                except ValueError:
                    check(False, where)


def main():
    if SSCONVERT is None:
        print("SKIPPED: Gnumeric's ssconvert is not installed (make deps installs gnumeric)")
        return 77
    lib = bridge.SheetLibrary(os.environ.get("ELLIPSA_LIBRARY") or json.load(
        open(os.path.join(PLUGIN_DIR, "paths.json")))["library"])
    index = {f.name: f.index for f in lib.catalog()}

    data, ref = cases.readings(bridge)
    sheet = wb.Sheet("T")
    sheet.put_row(0, 0, ["a", "b", "c"])
    for i, r in enumerate(data):
        for j, v in enumerate(r):
            sheet.put(1 + i, j, "=NA()" if v is bridge.ERROR else v)
    for i, r in enumerate(ref):
        sheet.put_row(1 + i, 4, r)
    rows_ref, ref_ref = "A2:C41", "E2:G61"
    ref_block = bridge.Block(ref)

    # Sweat data (Johnson & Wichern, Example 5.2) in columns AQ:AS.
    sweat = []
    with open(os.path.join(SRC, "tests", "reference", "hotelling", "sweat_johnson_wichern.csv")) as f:
        for rec in list(csv.reader(f))[1:]:
            sweat.append([float(x) for x in rec])
    for i, r in enumerate(sweat):
        sheet.put_row(1 + i, 42, r)
    sheet.put_row(30, 42, [4.0, 50.0, 10.0])  # mu0
    text_only = [["x", "y"], ["z", "w"], ["u", "v"]]
    for i, r in enumerate(text_only):
        sheet.put_row(40 + i, 42, r)

    # (function, formula arguments, bridge values, rows, cols)
    checks = cases.formulas(bridge, data, ref, rows_ref, ref_ref, ",") + [
        ("ELL.DIST2", "A2:C2," + ref_ref, [bridge.Block([data[0]]), ref_block], 1, 1),
        ("ELL.CENTER", '{1,2;3,4.5;5,7;2,2},"classical"', [bridge.Block([[1, 2], [3, 4.5], [5, 7], [2, 2]]),
                                                          "classical"], 1, 2),
    ]
    col = 8
    placed = []
    for name, args, values, nr, nc in checks:
        formula = "=%s(%s)" % (name, args)
        if nr == 1 and nc == 1:
            sheet.put(60, col, formula)
            placed.append((name, formula, values, 60, col))
            col += 1
        else:
            sheet.array(45 if nr == 1 or nr == 3 or nr == 9 else 1, col, nr, nc, formula)
            placed.append((name, formula, values, 45 if nr in (1, 3, 9) else 1, col))
            col += nc
    # Whole-function failures: an error text naming the problem.
    failures = [
        ('=ELL.DIST2(%s,%s,"mcdd")' % (rows_ref, ref_ref), "#ELLIPSA: method: unknown method 'mcdd'"),
        ("=ELL.DIST2(%s,E2:F61)" % rows_ref, "#ELLIPSA: reference has 2 columns but rows has 3"),
        ("=ELL.CHI2INV(1.5,3)", "#ELLIPSA: probability must lie in [0, 1)"),
        ("=ELL.FLAG(%s,%s,2)" % (rows_ref, ref_ref), "#ELLIPSA: level: must be between 0 and 1"),
        ("=ELL.DIST2(AQ41:AR43)", "#ELLIPSA: rows: ellipsa_model_fit:"),
        ("=ELL.DIST2(A2:C2)", "#ELLIPSA: rows: ellipsa_model_fit:"),
    ]
    for k, (formula, _) in enumerate(failures):
        sheet.put(62, 8 + k, formula)
        sheet.put(63, 8 + k, "=ISERROR(%s)" % wb.a1(62, 8 + k))
    # Outside references through the sheet.
    sheet.put(65, 8, "=20*ELL.DIST2(AQ31:AS31,AQ2:AS21,\"classical\")")  # J&W Example 5.2: T^2 = 9.7388
    sheet.put(65, 9, "=ELL.CHI2INV(0.95,10)")   # NIST/SEMATECH e-Handbook 1.3.6.7.4: 18.307
    sheet.put(65, 10, "=ELL.CHI2INV(0.999,1)")  # same table: 10.828
    sheet.put(66, 8, "=ISERROR(%s)" % wb.a1(1 + 17, 8))  # the text row of the first DIST2 block

    # The docs page lists every function.
    with open(os.path.join(SRC, "docs", "sheet-functions.md")) as f:
        docs = f.read()
    check(all("`%s(" % name in docs for name in index), "docs/sheet-functions.md lists every catalog function")

    covered = {name for name, *_ in checks}
    check(covered == set(index), "host checks cover every catalog function (missing: %s)"
          % sorted(set(index) - covered))

    work = tempfile.mkdtemp(prefix="ellipsa-gnumeric-")
    book = os.path.join(work, "host.gnumeric")
    wb.write(book, [sheet])
    out, proc = recalc(book, os.path.dirname(PLUGIN_DIR), os.path.join(work, "host.csv"))
    t2 = [(r, c) for name, _, _, r, c in placed if name == "ELL.T2LIMIT"][0]
    check(cell(out, *t2) not in ("", "#NAME?"),
          "the plugin loaded (stderr: %s)" % proc.stderr[-500:])

    for name, formula, values, r, c in placed:
        expect_block(out, r, c, lib.evaluate(index[name], values), formula)
    for k, (formula, prefix) in enumerate(failures):
        got = cell(out, 62, 8 + k)
        check(got.startswith(prefix), "%s shows %r, expected it to start with %r" % (formula, got, prefix))
        check(cell(out, 63, 8 + k) == "TRUE", "ISERROR(%s) is TRUE" % formula)
    check(abs(float(cell(out, 65, 8)) - 9.7388) < 5e-5, "J&W Example 5.2 T^2 9.7388: %s" % cell(out, 65, 8))
    check(abs(float(cell(out, 65, 9)) - 18.307) < 0.0015, "NIST chi-square 0.05, df 10: %s" % cell(out, 65, 9))
    check(abs(float(cell(out, 65, 10)) - 10.828) < 0.0015, "NIST chi-square 0.001, df 1: %s" % cell(out, 65, 10))
    check(cell(out, 66, 8) == "TRUE", "the text row's distance is an error value")
    # Sheet semantics, spelled out on the first DIST2 block (column I).
    check(cell(out, 1 + 9, 8) == "", "a blank row stays empty")
    check(cell(out, 1 + 17, 8) == "#NUM!" and cell(out, 1 + 30, 8) == "#NUM!",
          "text and error rows are errors in their row only")
    check(float(cell(out, 1 + 4, 8)) > 0, "a row with one blank is scored on its observed cells")

    # Independently of the sheet layer: the ordinary fit and score (Python binding).
    try:
        import ellipsa
        model = ellipsa.fit([[float(v) for v in r] for r in ref], method="mcd")
        clean = [[(v if isinstance(v, float) else None) for v in r] for r in data]
        d2 = model.score(clean, fields=["squared_distance"]).squared_distance
        for i in range(40):
            if i in (9, 17, 30):
                continue
            check(COMPARE(float(cell(out, 1 + i, 9)), float(d2[i]), float(d2[i])),
                  "row %d: sheet distance equals fit + score through the Python binding" % i)
    except ImportError as e:
        check(False, "Python binding importable: %s" % e)

    # The library missing next to the plugin: every function says so, the host stays up.
    broken = os.path.join(work, "plugins", "ellipsa")
    shutil.copytree(PLUGIN_DIR, broken)
    with open(os.path.join(broken, "paths.json"), "w") as f:
        json.dump({"library": os.path.join(work, "no-such-libellipsa.so")}, f)
    small = wb.Sheet("T")
    small.put(0, 0, "=ELL.CHI2INV(0.95,3)")
    small.put(0, 1, "=1+1")
    small.put(0, 2, "=ISERROR(A1)")
    wb.write(os.path.join(work, "missing.gnumeric"), [small])
    out2, _ = recalc(os.path.join(work, "missing.gnumeric"), os.path.dirname(broken), os.path.join(work, "m.csv"))
    check(cell(out2, 0, 0).startswith("#ELLIPSA: the ellipsa library cannot be used"),
          "missing library explained: %r" % cell(out2, 0, 0))
    check(cell(out2, 0, 1) == "2" and cell(out2, 0, 2) == "TRUE", "the host stays up: %r" % out2[:1])
    # A library of another version than the plugin was made for: the canary says so.
    with open(os.path.join(broken, "paths.json"), "w") as f:
        json.dump({"library": lib.path, "version": "0.0.0"}, f)
    small.put(0, 0, "=ELL.VERSION()")
    wb.write(os.path.join(work, "version.gnumeric"), [small])
    out3, _ = recalc(os.path.join(work, "version.gnumeric"), os.path.dirname(broken), os.path.join(work, "v.csv"))
    check("the plugin was made for 0.0.0" in cell(out3, 0, 0), "version mismatch explained: %r" % cell(out3, 0, 0))

    if FAILURES:
        print("%d failed checks" % len(FAILURES))
        return 1
    print("gnumeric host: %d formulas and %d failure cases checked in the real host; %d numbers bit for bit, "
          "%d within 1e-12 of their row" % (len(placed), len(failures), COMPARE.exact, COMPARE.close))
    shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
