"""Documented exit codes and messages for every class of failure."""
import os
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import EXAMPLES, run, scratch, write  # noqa: E402

failures = []


def expect(args, code, needle=None, stdin=None):
    got, out, err = run(*args, stdin=stdin)
    ok = got == code and (needle is None or needle in err)
    if not ok:
        failures.append(f"ellipsa {' '.join(args)}: exit {got} (want {code}); stderr: {err.strip()[:300]}")
        print("FAIL:", failures[-1])
    return out, err


tmp = scratch()
good = os.path.join(EXAMPLES, "moulding_reference.csv")

# 0: success, --help and --version.
expect(["--version"], 0)
out, _ = expect(["--help"], 0)
if "Exit codes" not in out or "5  rows were flagged" not in out:
    failures.append("--help documents the exit codes")
for sub in ("fit", "score", "screen", "inspect"):
    out, _ = expect([sub, "--help"], 0)
    if "Exit codes" not in out:
        failures.append(f"{sub} --help documents the exit codes")

# 2: usage errors.
expect(["fit", "--no-such-option", good], 2)
expect(["fit", "--method", "banana", good], 2, "banana")
expect(["fit", "--method", "mcd", "--alpha", "0.3", good], 2, "alpha")
expect(["fit", "--method", "mcd", "--consistency", "mean", good], 2, "--consistency")
expect(["fit", "--method", "classical", "--consistency", "median", good], 2, "mcd")
median_model = os.path.join(tmp, "median.json")
expect(["fit", "--method", "mcd", "--consistency", "median", "--seed", "1", "--quiet", good, "-o", median_model], 0)
with open(median_model) as f:
    if '"consistency_rule": "median"' not in f.read():
        failures.append("fit --consistency median records the rule in the model file")
expect(["score", "m.json", good, "--level", "1.5"], 2, "level")
expect(["score", "m.json", good, "--digits", "18"], 2, "--digits")
expect(["score", "m.json", good, "--digits", "ten"], 2, "--digits")
expect(["fit", "--method", "mixture", "--components", "x", good], 2, "whole number")
expect(["screen", good, "--by", "no_such_column"], 2, "no_such_column")

# 3: bad data or files, each named with line and column where there is one.
ragged = write(os.path.join(tmp, "ragged.csv"), "a,b,c\n1,2,3\n4,5\n")
expect(["fit", ragged], 3, ":3")
text = write(os.path.join(tmp, "text.csv"), "a,b\n1,2\n3,4\n5,abc\n")
expect(["fit", text, "--columns", "a,b"], 3, "abc")
notnum = write(os.path.join(tmp, "names.csv"), "name,place\nx,y\nz,w\n")
expect(["fit", notnum], 3, "no numeric columns")
expect(["fit", os.path.join(tmp, "missing.csv")], 3, "missing.csv")
header_only = write(os.path.join(tmp, "header.csv"), "a,b\n")
expect(["fit", header_only], 3, "no data rows")
few = write(os.path.join(tmp, "few.csv"), "a,b,c\n1,2,3\n")
expect(["fit", few], 3, "rows")
const = write(os.path.join(tmp, "const.csv"), "a,b\n1,5\n2,5\n3,5\n4,5\n")
expect(["fit", const], 3, "constant")
# An infinite cell ("inf", or a number beyond double range) is refused on
# every reading path (whole table, streaming fit, streaming score) with the
# file, the line and the column, before the library sees it.
inf_rows = "a,b,c\n" + "".join(f"{i},{(i * 7) % 11},{(i * 3) % 5}\n" for i in range(1, 30))
inf_cell = write(os.path.join(tmp, "inf.csv"), inf_rows.replace("\n4,6,2\n", "\n4,inf,2\n"))
huge_cell = write(os.path.join(tmp, "huge.csv"), inf_rows.replace("\n4,6,2\n", "\n4,1e999,2\n"))
where = 'inf.csv:5: column 2 ("b"): the number is infinite or beyond the range of double precision'
expect(["fit", "--method", "mcd", inf_cell], 3, where)         # whole table
expect(["fit", "--method", "classical", inf_cell], 3, where)   # streamed
expect(["screen", inf_cell], 3, where)
expect(["fit", "--method", "classical", huge_cell], 3, where.replace("inf.csv", "huge.csv"))
clean = write(os.path.join(tmp, "clean.csv"), inf_rows)
abc_model = os.path.join(tmp, "abc.json")
expect(["fit", "--method", "classical", "--quiet", clean, "-o", abc_model], 0)
expect(["score", abc_model, inf_cell, "-o", os.path.join(tmp, "s_inf.csv")], 3, where)   # streamed
finite_model = os.path.join(tmp, "finite.json")
expect(["fit", "--method", "classical", "--quiet", good, "-o", finite_model], 0)

# --verbose exists where it does something (fit: the columns left out) and
# nowhere else.
mixed = write(os.path.join(tmp, "mixed.csv"), "id,a,b\n" + "".join(f"r{i},{i},{(i * 7) % 11}\n" for i in range(1, 30)))
_, err = expect(["fit", "--method", "classical", "--verbose", mixed, "-o", os.path.join(tmp, "v.json")], 0)
if "skipped column id" not in err:
    failures.append("fit --verbose lists the skipped column: " + err)
for args in (["score", finite_model, good], ["screen", good], ["cluster", good],
             ["report", finite_model, good, "-o", os.path.join(tmp, "r.html")], ["inspect", finite_model],
             ["compare", good, good]):
    expect([args[0], "--verbose"] + args[1:], 2, "--verbose")

bad_model = write(os.path.join(tmp, "bad.json"), '{"format": "ellipsa-model", "format_version": 99}')
expect(["score", bad_model, good], 3, "format_version")
expect(["inspect", bad_model], 3, "format_version")

# 4: numerical failures: collinear columns (c = a + b exactly).
rows = "\n".join(f"{i},{(i * 7) % 11},{i + (i * 7) % 11}" for i in range(1, 40))
collinear = write(os.path.join(tmp, "collinear.csv"), "a,b,c\n" + rows + "\n")
expect(["fit", collinear], 4, "collinear")

# 5: flagged rows with --fail-on-flag (and 0 without it).
model = os.path.join(tmp, "model.json")
expect(["fit", "--method", "mcd", "--seed", "1", good, "-o", model], 0)
batch = os.path.join(EXAMPLES, "moulding_new_batch.csv")
expect(["score", model, batch, "-o", os.path.join(tmp, "s.csv")], 0)
expect(["score", model, batch, "-o", os.path.join(tmp, "s.csv"), "--fail-on-flag"], 5)
expect(["screen", batch, "--by", "mould", "--fail-on-flag", "--quiet"], 5)

print(f"{len(failures)} failures")
sys.exit(1 if failures else 0)
