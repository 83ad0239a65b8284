"""Mixtures end to end: exit code 4 for a mixture stopped at its iteration cap
(outputs still written, a warning on stderr, 4 before 5), failed candidates
with their reason in the cluster table, and screen's default limit for a
mixture (chi2)."""
import json
import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import Checks, run, scratch, write  # noqa: E402

check = Checks()
tmp = scratch()


def cloud(rng, n, centre):
    """n rows of two correlated normal columns around centre (invented data)."""
    rows = []
    for _ in range(n):
        common = rng.gauss(0.0, 1.0)
        rows.append((centre + 0.6 * common + rng.gauss(0.0, 1.0), centre + 1.2 * common + 2.0 * rng.gauss(0.0, 1.0)))
    return rows


def csv_file(name, rows):
    return write(os.path.join(tmp, name), "a,b\n" + "".join(f"{x!r},{y!r}\n" for x, y in rows))


rng = random.Random(20261203)
# One cloud split into two components: EM creeps, so one iteration cannot
# meet a relative tolerance of 1e-12.
blob = csv_file("blob.csv", cloud(rng, 200, 0.0))
# Two clouds far apart: EM settles within the default cap.
two = csv_file("two.csv", cloud(rng, 100, 0.0) + cloud(rng, 100, 30.0))
capped = ["--components", "2", "--max-iterations", "1", "--tolerance", "1e-12"]


def expect(args, code, needle=None):
    got, out, err = run(*args)
    check(got == code and (needle is None or needle in err),
          f"ellipsa {' '.join(args)}: exit {got} (want {code}, stderr with {needle!r}); stderr: {err.strip()[:400]}")
    return out, err


# --help documents the rule and its precedence.
out, _ = expect(["--help"], 0)
check("iteration cap" in out and "4 takes precedence" in out, "--help documents exit code 4 for mixtures")

# fit: the capped model is written, flagged as not converged, and the exit code is 4.
model = os.path.join(tmp, "capped.json")
_, err = expect(["fit", "--method", "mixture", *capped, blob, "-o", model], 4, "iteration cap")
check("warning" in err and "blob.csv" in err, "the warning names the file: " + err)
with open(model) as f:
    saved = json.load(f)
check(saved["converged"] is False and saved["iterations"] == 1, "capped model written with converged false")
out, _ = expect(["fit", "--method", "mixture", *capped, blob, "-o", model, "--json"], 4)
check(json.loads(out).get("converged") == 0, "JSON summary says converged 0")

# A converged mixture: exit 0, no warning.
_, err = expect(["fit", "--method", "mixture", "--components", "1-3", "--seed", "3", two,
                 "-o", os.path.join(tmp, "two.json")], 0)
check("iteration cap" not in err, "no warning for a converged mixture")

# The options apply to mixtures only.
expect(["fit", "--method", "mcd", "--max-iterations", "5", two], 2, "mixture")
expect(["fit", "--method", "mixture", "--max-iterations", "0", two], 2, "--max-iterations")
expect(["fit", "--method", "mixture", "--tolerance", "-1", two], 2, "--tolerance")

# cluster: same rule; the table says which candidates stopped at the cap.
out, err = expect(["cluster", blob, "--structure", "full", *capped, "--json"], 4, "iteration cap")
summary = json.loads(out)
check(summary["converged"] is False and summary["candidates"][0]["converged"] is False,
      "cluster JSON: not converged")
expect(["cluster", two, "--components", "1-3", "--structure", "full", "--seed", "3"], 0)

# cluster: a K range beyond the rows keeps the K that fit and shows the reason
# of the others (the wording is ellipsa's own, pinned in tests/core and tests/capi).
six = write(os.path.join(tmp, "six.csv"), "a\n0\n1\n2.5\n4\n9\n10.5\n")
_, err = expect(["cluster", six, "--components", "1-7", "--structure", "full"], 0)
check("not fitted: mixture: K = 7 exceeds the number of rows (6)" in err, "cluster shows the reason: " + err)
out, _ = expect(["cluster", six, "--components", "1-7", "--structure", "full", "--json"], 0)
cands = json.loads(out)["candidates"]
check(len(cands) == 7 and cands[6].get("reason") == "mixture: K = 7 exceeds the number of rows (6)"
      and "reason" not in cands[0] and sum(c["chosen"] for c in cands) == 1, "cluster JSON reasons")
# No K fits: a data error (3) with the reason.
expect(["cluster", six, "--components", "7-8", "--structure", "full"], 3, "exceeds the number of rows")

# screen with a mixture: chi2 is the default limit (it used to exit 70).
out, err = expect(["screen", two, "--method", "mixture", "--components", "2", "--seed", "3", "--json"], 0)
check(json.loads(out)["reference"] == "chi2", "screen --method mixture defaults to the chi2 limit")
expect(["screen", two, "--method", "mixture", "--components", "2", "--reference", "fitting-rows"], 2, "chi2")
expect(["screen", two, "--method", "mixture", "--components", "2", "--reference", "new-rows"], 2, "chi2")
expect(["screen", two, "--method", "mixture", "--components", "2", "--reference", "chi2", "--quiet"], 0)

# screen: a capped mixture exits 4, and 4 outranks 5 (--fail-on-flag with rows flagged).
out, err = expect(["screen", blob, "--method", "mixture", *capped, "--fail-on-flag", "--json"], 4, "iteration cap")
screened = json.loads(out)
check(screened["flagged"] > 0, "premise: the capped screen flags rows (so 5 also applied)")
check(screened["groups"][0].get("converged") is False, "screen JSON marks the group not converged")
check(not math.isnan(float(screened["level"])), "screen JSON readable")

check.finish()
