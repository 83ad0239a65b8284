#!/usr/bin/env python3
"""Real-host test of the LibreOffice Calc add-in: the extension built from the
catalog is installed into a fresh profile, a headless Calc computes a sheet
with every catalog function, and every computed cell is compared with the same
computation through the C interface (the bridge, in-process). Also: per-row
errors, whole-formula errors, an error cell inside a range, and the names
stored in saved workbooks (a workbook saved by an earlier build must open and
recalculate: tests/bindings/fixtures/calc_saved_by_0.1.0.ods).

Host facts (LibreOffice Calc 7.4): an error cell in a range stops the call
before the add-in sees it; per-element errors are NaNs carrying Calc's codes
(519 #VALUE!, 503 #NUM!); a whole-formula argument problem is Err:502.

Environment: ELLIPSA_CALC_ADDIN (the .oxt), ELLIPSA_LIBRARY, ELLIPSA_SOURCE_DIR.
Run with Debian's /usr/bin/python3 (the UNO bridge). Exit 77 when LibreOffice
or its Python bridge is missing.
"""
import os
import shutil
import sys
import zipfile

SRC = os.environ["ELLIPSA_SOURCE_DIR"]
OXT = os.environ["ELLIPSA_CALC_ADDIN"]
HERE = os.path.dirname(os.path.abspath(__file__))
FIXTURE = os.path.join(HERE, "fixtures", "calc_saved_by_0.1.0.ods")
sys.path[:0] = [os.path.join(SRC, "bindings-c", "sheet"), os.path.join(SRC, "bindings-c", "calc"), HERE]
import ellipsa_sheet as bridge  # noqa: E402
import sheet_host_cases as cases  # noqa: E402

from sheet_host_cases import FAILURES, check  # noqa: E402
COMPARE = cases.Comparison()
CALC_CODES = {bridge.ERROR_VALUE: 519, bridge.ERROR_NUM: 503, bridge.ERROR_NA: 32767}
STORED_PREFIX = "ORG.ELLIPSA.SHEETFUNCTIONS."



def read_cell(cell):
    """('error', code) | ('text', s) | ('number', x)."""
    err = cell.getError()
    if err:
        return ("error", err)
    if cell.FormulaResultType2 == 2:  # com.sun.star.sheet.FormulaResult.STRING
        return ("text", cell.getString())
    return ("number", cell.getValue())


def expect_block(sheet, r0, c0, expected, what):
    for i, erow in enumerate(expected):
        scale = max([abs(v) for v in erow if isinstance(v, float)] + [0.0])
        for j, e in enumerate(erow):
            kind, got = read_cell(sheet.getCellByPosition(c0 + j, r0 + i))
            where = "%s cell (%d, %d): host %s %r, expected %r" % (what, i, j, kind, got, e)
            if isinstance(e, bridge.CellError):
                check(kind == "error" and got == CALC_CODES[e.code], where)
            elif e is None:
                check(kind == "text" and got == "", where)
            elif isinstance(e, str):
                check(kind == "text" and got == e, where)
            else:
                check(kind == "number" and COMPARE(got, e, scale), where)


def fill(sheet, r0, c0, rows):
    for i, r in enumerate(rows):
        for j, v in enumerate(r):
            cell = sheet.getCellByPosition(c0 + j, r0 + i)
            if isinstance(v, float):
                cell.setValue(v)
            elif isinstance(v, str):
                cell.setString(v)


def main():
    try:
        from calc_session import CalcSession
    except ImportError as e:
        print("SKIPPED: LibreOffice's Python bridge is missing (%s); make deps installs python3-uno" % e)
        return 77
    if shutil.which("soffice") is None or not os.path.exists(OXT):
        print("SKIPPED: LibreOffice Calc or the built extension is missing (make deps, make build)")
        return 77
    lib = bridge.SheetLibrary(os.environ["ELLIPSA_LIBRARY"])
    index = {f.name: f.index for f in lib.catalog()}
    data, ref = cases.readings(bridge, error_cell=False)
    session = CalcSession(OXT)
    try:
        doc = session.new_sheet_document()
        sheet = doc.Sheets.getByIndex(0)
        fill(sheet, 1, 0, data)
        fill(sheet, 1, 4, ref)
        checks = cases.formulas(bridge, data, ref, "A2:C41", "E2:G61", ";")
        check({c[0] for c in checks} == set(index), "host checks cover every catalog function")
        placed, col = [], 8
        for name, args, values, nr, nc in checks:
            formula = "=%s(%s)" % (name, args)
            if nr == 1 and nc == 1:
                sheet.getCellByPosition(col, 60).setFormula(formula)
                placed.append((name, formula, values, 60, col))
                col += 1
            else:
                r0 = 45 if nr in (1, 3, 9) else 1
                sheet.getCellRangeByPosition(col, r0, col + nc - 1, r0 + nr - 1).setArrayFormula(formula)
                placed.append((name, formula, values, r0, col))
                col += nc
        # Whole-formula problems, and an error value inside a range.
        sheet.getCellByPosition(8, 62).setFormula('=ELL.DIST2(A2:C41;E2:G61;"mcdd")')
        sheet.getCellByPosition(9, 62).setFormula("=ELL.DIST2(A2:C41;E2:F61)")
        sheet.getCellByPosition(10, 62).setFormula("=ELL.CHI2INV(1.5;3)")
        sheet.getCellByPosition(11, 62).setFormula("=NA()")
        sheet.getCellByPosition(12, 62).setFormula("=ELL.DIST2(E2:G61;L63:N63)")
        sheet.getCellByPosition(13, 62).setFormula("=ELL.DIST2(A2:C2)")  # one row cannot be fitted
        fill(sheet, 70, 0, [["x", "y"], ["z", "w"], ["u", "v"]])
        sheet.getCellByPosition(14, 62).setFormula("=ELL.DIST2(A71:B73)")  # text only
        # Outside references through Calc: Johnson & Wichern Example 5.2 (sweat
        # data, H0 mu = (4, 50, 10)): T^2 = 9.7388; NIST/SEMATECH e-Handbook
        # 1.3.6.7.4 chi-square critical values 18.307 (0.05, 10 df), 10.828 (0.001, 1 df).
        sweat = []
        with open(os.path.join(SRC, "tests", "reference", "hotelling", "sweat_johnson_wichern.csv")) as f:
            for line in f.read().splitlines()[1:]:
                sweat.append([float(x) for x in line.split(",")])
        fill(sheet, 80, 0, sweat)
        fill(sheet, 101, 0, [[4.0, 50.0, 10.0]])
        sheet.getCellByPosition(8, 65).setFormula('=20*ELL.DIST2(A102:C102;A81:C100;"classical")')
        sheet.getCellByPosition(9, 65).setFormula("=ELL.CHI2INV(0.95;10)")
        sheet.getCellByPosition(10, 65).setFormula("=ELL.CHI2INV(0.999;1)")
        doc.calculateAll()
        for name, formula, values, r0, c0 in placed:
            expect_block(sheet, r0, c0, lib.evaluate(index[name], values), formula)
        for c, what in ((8, "misspelt method"), (9, "reference with other columns"), (10, "probability 1.5"),
                        (13, "a one-row range fitted on itself"), (14, "a text-only range")):
            kind, got = read_cell(sheet.getCellByPosition(c, 62))
            check(kind == "error" and got == 502, "%s is Err:502 (got %s %r)" % (what, kind, got))
        kind, got = read_cell(sheet.getCellByPosition(12, 62))
        check(kind == "error", "an error value in a range gives an error (got %s %r)" % (kind, got))
        for c, expected, tolerance, what in ((8, 9.7388, 5e-5, "J&W Example 5.2 T^2"),
                                             (9, 18.307, 0.0015, "NIST chi-square 0.05, 10 df"),
                                             (10, 10.828, 0.0015, "NIST chi-square 0.001, 1 df")):
            kind, got = read_cell(sheet.getCellByPosition(c, 65))
            check(kind == "number" and abs(got - expected) < tolerance, "%s: %s %r" % (what, kind, got))
        # No cell anywhere shows the name error (525: an unknown function).
        cursor = sheet.createCursor()
        cursor.gotoEndOfUsedArea(False)
        end = cursor.RangeAddress
        names = [(r, c) for r in range(end.EndRow + 1) for c in range(8, end.EndColumn + 1)
                 if sheet.getCellByPosition(c, r).getError() == 525]
        check(not names, "no cell shows #NAME? (525): %s" % names[:5])
        # Semantics spelled out on the first DIST2 block (column I).
        check(read_cell(sheet.getCellByPosition(8, 10)) == ("text", ""), "a blank row stays empty")
        check(read_cell(sheet.getCellByPosition(8, 18)) == ("error", 519), "a text row is #VALUE! in that row")

        # Stored names: part of every saved workbook.
        saved = os.path.join(session.work, "saved.ods")
        session.save_ods(doc, saved)
        with zipfile.ZipFile(saved) as z:
            content = z.read("content.xml").decode("utf-8")
        for name in index:
            stored = STORED_PREFIX + name.split(".", 1)[1].upper()
            check(stored in content, "saved workbook stores %s" % stored)
        if os.environ.get("ELLIPSA_WRITE_CALC_FIXTURE"):
            shutil.copyfile(saved, FIXTURE)
        doc.close(True)

        # A workbook saved by an earlier build opens and recalculates.
        old = session.open(FIXTURE)
        old.calculateAll()
        s = old.Sheets.getByIndex(0)
        expect_block(s, 1, 9, lib.evaluate(index["ELL.DIST2"], [bridge.Block(data), bridge.Block(ref)]),
                     "fixture saved by 0.1.0: ELL.DIST2 with a reference")
        old.close(True)
    finally:
        session.close()

    # An extension made for another library version: the canary says so in its cell.
    other = os.path.join(os.path.dirname(os.path.abspath(OXT)), "ellipsa-calc-other-version.oxt")
    with zipfile.ZipFile(OXT) as src, zipfile.ZipFile(other, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            body = src.read(item.filename)
            if item.filename == "build_info.json":
                body = b'{"version": "0.0.0"}'
            dst.writestr(item, body)
    session = CalcSession(other)
    try:
        doc = session.new_sheet_document()
        sheet = doc.Sheets.getByIndex(0)
        sheet.getCellByPosition(0, 0).setFormula("=ELL.VERSION()")
        sheet.getCellByPosition(1, 0).setFormula("=ELL.CHI2INV(0.95;3)")
        sheet.getCellByPosition(2, 0).setFormula("=1+1")
        doc.calculateAll()
        kind, got = read_cell(sheet.getCellByPosition(0, 0))
        check(kind == "text" and "the extension was made for 0.0.0" in got, "version mismatch explained: %r" % got)
        check(read_cell(sheet.getCellByPosition(1, 0)) == ("error", 502), "other functions refuse to compute")
        check(read_cell(sheet.getCellByPosition(2, 0)) == ("number", 2.0), "the host stays up")
        doc.close(True)
    finally:
        session.close()
        os.remove(other)
    if FAILURES:
        print("%d failed checks" % len(FAILURES))
        return 1
    print("calc host: %d formulas checked in LibreOffice Calc; %d numbers bit for bit, %d within 1e-12 of their "
          "row; %d stored names; the 0.1.0 fixture recalculates" % (len(placed), COMPARE.exact, COMPARE.close,
                                                                    len(index)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
