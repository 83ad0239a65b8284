#!/usr/bin/env python3
"""The demo workbook in LibreOffice Calc's native format
(examples/moulding_line_screen.ods, invented data, made by
examples/make_demo_workbook.py --calc) opens and recalculates in a headless
Calc with the extension, and agrees with the batch tool on the same data
(tests/bindings/demo_expectations.py), as the Gnumeric workbook does.

Environment: ELLIPSA_CALC_ADDIN, ELLIPSA_SOURCE_DIR, ELLIPSA_BIN. Run with
Debian's /usr/bin/python3. Exit 77 when LibreOffice or its bridge is missing.
"""
import os
import shutil
import sys
import tempfile
import time

SRC = os.environ["ELLIPSA_SOURCE_DIR"]
EXAMPLES = os.path.join(SRC, "examples")
BOOK = os.path.join(EXAMPLES, "moulding_line_screen.ods")
sys.path[:0] = [os.path.join(SRC, "bindings-c", "calc"), os.path.dirname(os.path.abspath(__file__))]
import demo_expectations as expectations  # noqa: E402

from sheet_host_cases import FAILURES, check  # noqa: E402



def table(sheet):
    """The used area as rows of strings (numbers with repr), in one UNO call."""
    cursor = sheet.createCursor()
    cursor.gotoEndOfUsedArea(False)
    end = cursor.RangeAddress
    data = sheet.getCellRangeByPosition(0, 0, end.EndColumn, end.EndRow).getDataArray()
    return [[repr(v) if isinstance(v, float) else v for v in row] for row in data]


def main():
    try:
        from calc_session import CalcSession
    except ImportError as e:
        print("SKIPPED: LibreOffice's Python bridge is missing (%s)" % e)
        return 77
    oxt = os.environ["ELLIPSA_CALC_ADDIN"]
    if shutil.which("soffice") is None or not os.path.exists(oxt):
        print("SKIPPED: LibreOffice Calc or the built extension is missing")
        return 77
    work = tempfile.mkdtemp(prefix="ellipsa-calc-demo-")
    book = os.path.join(work, os.path.basename(BOOK))  # a copy: Calc leaves a lock file beside what it opens
    shutil.copyfile(BOOK, book)
    start = time.monotonic()
    session = CalcSession(oxt)  # a cold start: fresh profile, extension installed, soffice answering
    cold = time.monotonic() - start
    try:
        start = time.monotonic()
        doc = session.open(book)  # loading recalculates: the fits happen here
        opened = time.monotonic() - start
        check(doc is not None, "the demo workbook opens")
        start = time.monotonic()
        doc.calculateAll()  # again: every fit now comes from the cache
        seconds = time.monotonic() - start
        tables = {name: table(doc.Sheets.getByName(name)) for name in ("NewBatch", "Shift", "Regimes")}
        doc.close(True)
    finally:
        session.close()
    summary = expectations.check_demo(tables, os.environ["ELLIPSA_BIN"], EXAMPLES, work, check)
    if FAILURES:
        print("%d failed checks" % len(FAILURES))
        return 1
    print("demo workbook (Calc): %s; cold start (profile, install, soffice) %.1f s; open with recalculation "
          "%.2f s; a second recalculation of all sheets (fits cached) %.2f s" % (summary, cold, opened, seconds))
    shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
