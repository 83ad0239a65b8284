#!/usr/bin/env python3
"""Writes the demo workbook of the sheet functions from the invented
cap-moulding data in this folder (examples/README.md):

    python3 examples/make_demo_workbook.py [OUT.gnumeric]
        Gnumeric's format (standard library only);
        default examples/moulding_line_screen.gnumeric
    /usr/bin/python3 examples/make_demo_workbook.py --calc ELLIPSA_CALC.OXT [OUT.ods]
        the same sheets and formulas in LibreOffice Calc's native format, made
        by a headless Calc with the extension installed (values computed by
        Calc); default examples/moulding_line_screen.ods

Sheets:
  NewBatch  - the new batch's mould A shots (invented; 3 faults planted) scored
              against a robust profile of the clean reference shots: distance,
              p-value, flag, the variable behind each flag; flagged rows shaded.
  Reference - the clean reference period's mould A shots (the profile's rows).
  Shift     - one shift of mould A screened against its own robust profile.
  Regimes   - the whole reference period (both moulds): regime labels from a
              Gaussian mixture and the BIC table.
The formulas are the plugin's ELL.* functions; nothing is precomputed.
"""
import csv
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "bindings-c", "gnumeric"))
import workbook_xml as wb  # noqa: E402

READINGS = ["melt_temp_C", "cooling_water_C", "injection_pressure_bar", "hold_time_s", "cycle_time_s",
            "cap_mass_g", "cap_diameter_mm"]
SEED = 1  # the same seed as `make demo` (examples/run-demo.sh)
SHADE = "FFFF:D0D0:A0A0"


def rows_of(name, mould=None):
    with open(os.path.join(HERE, name), newline="") as f:
        return [r for r in csv.DictReader(f) if mould is None or r["mould"] == mould]


def number(text):
    return None if text in ("", "NA") else float(text)


def readings_sheet(name, records, extra_first=("shot_id", "timestamp")):
    s = wb.Sheet(name)
    s.put_row(0, 0, list(extra_first) + READINGS)
    for i, r in enumerate(records):
        s.put_row(1 + i, 0, [r[k] for k in extra_first] + [number(r[k]) for k in READINGS])
    s.width(0, 60)
    s.width(1, 105)
    for j in range(2, 2 + len(READINGS)):
        s.width(j, 70)
    return s


def screen_columns(s, n, data, reference, first_col):
    """distance, p-value, flag, driver column and name for rows 2..n+1."""
    ref = reference if reference else '""'
    opts = '"mcd","",%d' % SEED
    c = first_col
    s.put_row(0, c, ["distance", "p_value", "flag", "driver_col", "driver"])
    s.array(1, c, n, 1, "=ELL.DIST2(%s,%s,%s)" % (data, ref, opts))
    s.array(1, c + 1, n, 1, "=ELL.PVALUE(%s,%s,%s)" % (data, ref, opts))
    s.array(1, c + 2, n, 1, "=ELL.FLAG(%s,%s,0.975,%s)" % (data, ref, opts))
    s.array(1, c + 3, n, 1, "=ELL.DRIVER(%s,%s,%s)" % (data, ref, opts))
    flag, driver = wb.col_name(c + 2), wb.col_name(c + 3)
    s.width(c + 4, 120)
    for i in range(n):
        s.put(1 + i, c + 4, '=IF(%s%d=1,INDEX($C$1:$I$1,1,%s%d),"")' % (flag, i + 2, driver, i + 2))
    s.highlight(1, 0, n, c + 4, "=$%s1=1" % flag, SHADE)
    return c + 6


def notes(s, row, col, lines):
    for k, line in enumerate(lines):
        s.put(row + k, col, line)


def sheets():
    ref_a = rows_of("moulding_reference.csv", "A")
    new_a = rows_of("moulding_new_batch.csv", "A")
    shift_a = rows_of("moulding_line.csv", "A")
    ref_all = rows_of("moulding_reference.csv")
    planted = {r["shot_id"]: r["fault_type"] for r in rows_of("moulding_new_batch_faults.csv")}
    planted_shift = {r["shot_id"]: r["fault_type"] for r in rows_of("moulding_line_faults.csv")}

    new = readings_sheet("NewBatch", new_a)
    n = len(new_a)
    data, reference = "C2:I%d" % (n + 1), "Reference!C2:I%d" % (len(ref_a) + 1)
    c = screen_columns(new, n, data, reference, 9)
    new.put(0, 14, "planted fault (invented)")
    for i, r in enumerate(new_a):
        if r["shot_id"] in planted:
            new.put(1 + i, 14, planted[r["shot_id"]])
    c = 16
    notes(new, 0, c, [
        "INVENTED DATA: an imagined cap-moulding line (examples/README.md); no real plant or product.",
        "New mould A shots scored against a robust (MCD) profile of the clean reference period.",
        "A flag is statistical evidence that a shot differs from the profile, not a verdict:",
        "release or reject parts only under your procedures, local regulations and qualified review.",
        "Flagging level", 0.975,
        "Chi-square limit for 7 readings at that level", "=ELL.CHI2INV(%s,7)" % wb.a1(5, c),
        "Hotelling T^2 limit for a new shot (classical profile of the reference rows)",
        "=ELL.T2LIMIT(%d,7,%s,2)" % (len(ref_a), wb.a1(5, c)),
        "Shots flagged", "=SUM(L2:L%d)" % (n + 1),
        "Shots with a planted fault", "=COUNTA(O2:O%d)" % (n + 1),
        "Planted faults flagged", "=SUMPRODUCT((O2:O%d<>\"\")*(L2:L%d=1))" % (n + 1, n + 1),
    ])
    new.width(c, 110)

    ref = readings_sheet("Reference", ref_a)

    shift = readings_sheet("Shift", shift_a)
    m = len(shift_a)
    screen_columns(shift, m, "C2:I%d" % (m + 1), None, 9)
    shift.put(0, 14, "planted fault (invented)")
    for i, r in enumerate(shift_a):
        if r["shot_id"] in planted_shift:
            shift.put(1 + i, 14, planted_shift[r["shot_id"]])
    notes(shift, 0, 16, ["INVENTED DATA. One shift of mould A screened against its own robust profile.",
                         "Blank cells are missing readings: those shots are scored on the readings present."])

    regimes = readings_sheet("Regimes", ref_all, ("shot_id", "mould"))
    k = len(ref_all)
    regimes.put(0, 9, "regime")
    regimes.array(1, 9, k, 1, '=ELL.REGIME(C2:I%d,"","1-3","full",%d)' % (k + 1, SEED))
    regimes.array(0, 11, 4, 8, '=ELL.REGIMETABLE(C2:I%d,"1-3","full",%d)' % (k + 1, SEED))
    notes(regimes, 6, 11, ["INVENTED DATA. Both moulds of the reference period: the mixture with the lowest BIC",
                           "should find the two moulds as two regimes without being told which shot is which."])

    return [new, ref, shift, regimes]


def main(argv):
    if len(argv) > 2 and argv[1] == "--calc":
        sys.path.insert(0, os.path.join(HERE, "..", "bindings-c", "calc"))
        from calc_session import CalcSession
        import calc_workbook
        session = CalcSession(os.path.abspath(argv[2]))
        try:
            out = os.path.abspath(argv[3] if len(argv) > 3 else os.path.join(HERE, "moulding_line_screen.ods"))
            calc_workbook.write(session, out, sheets()).close(True)
        finally:
            session.close()
        return 0
    wb.write(argv[1] if len(argv) > 1 else os.path.join(HERE, "moulding_line_screen.gnumeric"), sheets(),
             compress=True)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
