#!/usr/bin/env python3
"""The Fortran example (examples/fortran/screen_new_batch.f90) against the batch tool.

  check_fortran_example.py EXAMPLE_EXE ELLIPSA_BIN SOURCE_DIR SCRATCH_DIR

Runs the compiled example on the demo files (invented data), then does the
same step with the batch tool: `ellipsa fit --method mcd --seed 1` on the
reference's mould A shots and `ellipsa score` of the new batch's. The model
file the Fortran program wrote must be byte-identical to the tool's (same
numbers read from the same text, same fit), and the shots it lists as
flagged, with their squared distances, must be those the tool flags.
"""
import csv
import os
import re
import subprocess
import sys


def mould_a(src, dst):
    with open(src) as f, open(dst, "w") as g:
        for i, line in enumerate(f):
            if i == 0 or line.startswith("A-"):
                g.write(line)


def main(exe, tool, src, scratch):
    os.makedirs(scratch, exist_ok=True)
    ref, new = (os.path.join(src, "examples", n) for n in ("moulding_reference.csv", "moulding_new_batch.csv"))
    fortran_model = os.path.join(scratch, "fortran_example_model.json")
    out = subprocess.run([exe, ref, new, fortran_model], stdout=subprocess.PIPE, universal_newlines=True)
    sys.stdout.write(out.stdout)
    if out.returncode != 0:
        print("FAIL the example exited with %d" % out.returncode)
        return 1
    listed = {m.group(1): float(m.group(2)) for m in re.finditer(r"^\s+(A-\d+)\s+d2 =\s+([\d.]+)", out.stdout, re.M)}

    ref_a, new_a = os.path.join(scratch, "reference_A.csv"), os.path.join(scratch, "new_batch_A.csv")
    mould_a(ref, ref_a)
    mould_a(new, new_a)
    tool_model, scored = os.path.join(scratch, "tool_model.json"), os.path.join(scratch, "tool_scored.csv")
    subprocess.run([tool, "fit", "--method", "mcd", "--seed", "1", "--quiet", ref_a, "-o", tool_model], check=True)
    subprocess.run([tool, "score", "--quiet", tool_model, new_a, "-o", scored], check=True)
    with open(scored) as f:
        flagged = {r["shot_id"]: float(r["sq_distance"]) for r in csv.DictReader(f) if r["flag"] == "1"}

    failures = 0
    same = open(fortran_model, "rb").read() == open(tool_model, "rb").read()
    print(("ok   " if same else "FAIL ") + "the Fortran program's model file = `ellipsa fit`'s, byte for byte")
    failures += not same
    ok = sorted(listed) == sorted(flagged) and len(listed) > 0
    print(("ok   " if ok else "FAIL ") + "flagged shots = those `ellipsa score` flags: %s" % ", ".join(sorted(flagged)))
    failures += not ok
    # The example prints d2 with two decimals.
    ok = ok and all(abs(listed[k] - flagged[k]) <= 0.005 + 1e-9 for k in flagged)
    print(("ok   " if ok else "FAIL ") + "their squared distances agree to the two decimals printed")
    failures += not ok
    return 1 if failures else 0


if __name__ == "__main__":
    if len(sys.argv) != 5:
        sys.exit(__doc__)
    sys.exit(main(*sys.argv[1:]))
