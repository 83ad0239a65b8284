"""What the demo workbook (examples/make_demo_workbook.py, invented data) must
show in any spreadsheet host: the same flags as the batch tool on the same
data (`ellipsa fit` + `ellipsa score` for the new batch against the reference,
`ellipsa screen` for the shift) and the same regimes (`ellipsa cluster`).
A host test reads the recalculated sheets into tables (lists of rows of
strings, first row the titles) and calls check_demo()."""
import csv
import os
import subprocess

SEED = "1"  # the workbook's seed


def _read(path):
    with open(path, newline="") as f:
        return list(csv.reader(f))


def _mould_rows(examples, name, mould, out):
    with open(os.path.join(examples, name), newline="") as f:
        lines = f.read().splitlines()
    keep = [lines[0]] + [line for line in lines[1:] if mould is None or line.split(",")[2] == mould]
    with open(out, "w") as f:
        f.write("\n".join(keep) + "\n")
    return out


def _tool(binary, *args):
    p = subprocess.run([binary, *args], capture_output=True, text=True, timeout=600)
    if p.returncode != 0:
        raise SystemExit("ellipsa %s: exit %d\n%s" % (" ".join(args), p.returncode, p.stderr))


def column(rows, name):
    j = rows[0].index(name)
    return [r[j] if j < len(r) else "" for r in rows[1:]]


def _ints(values):
    return [int(float(v)) for v in values if v != ""]


def check_demo(tables, binary, examples, work, check):
    """tables: sheet name -> rows. Returns a one-line summary."""
    new, shift, regimes = tables["NewBatch"], tables["Shift"], tables["Regimes"]
    ref_a = _mould_rows(examples, "moulding_reference.csv", "A", os.path.join(work, "ref_A.csv"))
    new_a = _mould_rows(examples, "moulding_new_batch.csv", "A", os.path.join(work, "new_A.csv"))
    model = os.path.join(work, "model.json")
    _tool(binary, "fit", "--method", "mcd", "--seed", SEED, "--quiet", ref_a, "-o", model)
    scored = os.path.join(work, "scored.csv")
    _tool(binary, "score", model, new_a, "-o", scored, "--quiet")
    cli = _read(scored)
    sheet_flags, cli_flags = _ints(column(new, "flag")), _ints(column(cli, "flag"))
    check(sheet_flags == cli_flags, "new batch: sheet flags equal `ellipsa score` flags (%d vs %d flagged)"
          % (sum(sheet_flags), sum(cli_flags)))
    for s, c in zip(column(new, "distance"), column(cli, "sq_distance")):
        check(abs(float(s) - float(c)) <= 1e-9 * max(1.0, abs(float(c))), "distance %s vs %s" % (s, c))
    planted = [f for f, p in zip(column(new, "flag"), column(new, "planted fault (invented)")) if p]
    check(len(planted) == 3 and all(int(float(f)) == 1 for f in planted), "the three planted faults are flagged")

    line_a = _mould_rows(examples, "moulding_line.csv", "A", os.path.join(work, "line_A.csv"))
    screened = os.path.join(work, "screened.csv")
    _tool(binary, "screen", line_a, "--method", "mcd", "--seed", SEED, "-o", screened, "--quiet")
    shift_flags = _ints(column(shift, "flag"))
    check(shift_flags == _ints(column(_read(screened), "flag")), "shift: sheet flags equal `ellipsa screen` flags")

    clustered = os.path.join(work, "clustered.csv")
    _tool(binary, "cluster", os.path.join(examples, "moulding_reference.csv"), "--components", "1-3",
          "--structure", "full", "--seed", SEED, "--scores", clustered, "--quiet")
    sheet_regime, cli_regime = _ints(column(regimes, "regime")), _ints(column(_read(clustered), "component"))
    offset = sheet_regime[0] - cli_regime[0]  # the tool may count from 0 or 1
    check(len(sheet_regime) == len(cli_regime) and offset in (0, 1)
          and all(s - c == offset for s, c in zip(sheet_regime, cli_regime)),
          "regimes: sheet labels equal `ellipsa cluster` components")
    check(len(set(zip(column(regimes, "mould"), sheet_regime))) == 2, "each mould is one regime")
    return "%d new-batch flags, %d shift flags, regimes as the batch tool" % (sum(sheet_flags), sum(shift_flags))
