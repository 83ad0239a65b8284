#!/usr/bin/env python3
"""Writes a model file with the Python binding for the Fortran smoke test.

  write_fortran_fixture.py OUT_DIR

OUT_DIR/python_model.json: an MCD fit (seed 3) of 40 invented rows, as
ellipsa.Model.save() writes it. OUT_DIR/python_scores.txt: what the Python
binding reports for four rows scored against that model, for the Fortran side
to compare with its own scoring of the loaded file:
  line 1: p n;  then n lines of p values;  then n squared distances;  then the
  model's location (p values). Every number as repr() writes it (it reads back
  to the same double). Needs ELLIPSA_LIBRARY and PYTHONPATH (bindings-c/python).
"""
import math
import os
import sys

import ellipsa


def rows(n):
    """Deterministic invented rows of three correlated variables."""
    out = []
    for i in range(1, n + 1):
        u1, u2, u3 = math.sin(0.61 * i), math.cos(1.7 * i + 0.2), math.sin(0.013 * i * i)
        out.append([20.0 + u1, 4.0 + 0.6 * u1 + u2, -1.0 + 0.3 * u2 + 0.5 * u3])
    return out


def main(out_dir):
    os.makedirs(out_dir, exist_ok=True)
    model = ellipsa.fit(rows(40), method="mcd", seed=3, columns=["melt", "water", "mass"])
    with open(os.path.join(out_dir, "python_model.json"), "w", encoding="utf-8") as f:
        f.write(model.save())
    probe = [[20.5, 4.1, -0.9], [19.0, 3.0, -1.5], [21.0, 5.5, 0.2], [20.0, 4.0, -1.0]]
    d2 = model.score(probe).squared_distance
    with open(os.path.join(out_dir, "python_scores.txt"), "w", encoding="ascii") as f:
        f.write("3 %d\n" % len(probe))
        for r in probe:
            f.write(" ".join(repr(v) for v in r) + "\n")
        for v in d2:
            f.write(repr(float(v)) + "\n")
        f.write(" ".join(repr(float(v)) for v in model.location) + "\n")
    print("wrote %s/python_model.json and python_scores.txt" % out_dir)


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    main(sys.argv[1])
