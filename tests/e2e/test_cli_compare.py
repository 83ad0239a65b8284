"""ellipsa compare end to end: values against base R on the iris data, the demo
pair, the readable summary, the HTML page, and the exit codes."""
import json
import os
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import EXAMPLES, REFERENCE, Checks, filtered_csv, run, scratch, write  # noqa: E402

check = Checks()

tmp = scratch()
iris = os.path.join(REFERENCE, "mixtures", "iris.csv")
versicolor = filtered_csv(iris, os.path.join(tmp, "versicolor.csv"), lambda r: r["Species"] == "versicolor")
virginica = filtered_csv(iris, os.path.join(tmp, "virginica.csv"), lambda r: r["Species"] == "virginica")

# Iris, versicolor against virginica: base R 4.x values (tests/core/test_two_sample_tests.cpp).
code, out, err = run("compare", versicolor, virginica, "--json", "--permutations", "19", "--seed", "1")
check(code == 0, f"iris compare exit {code}: {err}")
j = json.loads(out)
check(abs(j["mean_shift"]["statistic"] - 355.472145199055) < 1e-8, "iris T^2 (base R 355.472145199055)")
check(abs(j["covariance_change"]["transformed"] - 35.0366440964854) < 1e-8, "iris Box's M chi2 (base R 35.0366440964854)")
check(j["mean_shift"]["df2"] == 95, "T^2 df2 = n1 + n2 - p - 1 = 95")
check(j["moved"] is True, "iris species differ")
check([v["column"] for v in j["variables"]] == ["Sepal.Length", "Sepal.Width", "Petal.Length", "Petal.Width"],
      "variables in the reference's column order")
check(abs(j["variables"][2]["welch_t"] - 12.6037794413850) < 1e-9, "Welch t, Petal.Length (base R t.test)")
check(j["robust_mean_shift"]["permutations"] == 19, "robust test used the relabellings asked for")
check(abs(j["robust_mean_shift"]["p_value"] - 1 / 20) < 1e-12, "a shift this large: smallest permutation p-value 1/20")

# The demo pair, mould A: readable summary with a verdict and the cautions.
ref_a = filtered_csv(os.path.join(EXAMPLES, "moulding_reference.csv"), os.path.join(tmp, "ref_A.csv"),
                     lambda r: r["shot_id"].startswith("A-"))
new_a = filtered_csv(os.path.join(EXAMPLES, "moulding_new_batch.csv"), os.path.join(tmp, "new_A.csv"),
                     lambda r: r["shot_id"].startswith("A-"))
page = os.path.join(tmp, "compare.html")
code, out, err = run("compare", ref_a, new_a, "--html", page)
check(code == 0, f"demo compare exit {code}: {err}")
check("Hotelling" in out and "Box's M" in out and "Holm" in out, "summary names the tests")
check("new batch differs" in out or "No evidence" in out, "summary states a verdict")
check("non-normal" in out, "summary says Box's M is sensitive to non-normal data")
check("regulations" in out, "summary carries the caution")
with open(page) as f:
    html = f.read()
check(html.startswith("<!DOCTYPE html>") and "Has the process moved?" in html and "<script" not in html,
      "HTML page written, self-contained")
for col in ("melt_temp_C", "cooling_water_C", "cap_mass_g"):
    check(col in out and col in html, f"{col} listed")

# Exit codes: 6 with --fail-on-change when something moved, 0 without.
code, _, _ = run("compare", versicolor, virginica, "--no-robust", "--fail-on-change", "--quiet")
check(code == 6, f"--fail-on-change on different species: exit {code}, want 6")
code, _, _ = run("compare", versicolor, versicolor, "--no-robust", "--fail-on-change", "--quiet")
check(code == 0, f"--fail-on-change on identical batches: exit {code}, want 0")
# 2: usage; 3: data (a column missing from the new batch, too few rows).
code, _, err = run("compare", versicolor, virginica, "--significance", "2")
check(code == 2 and "significance" in err, f"bad --significance: exit {code}")
code, _, err = run("compare", versicolor, virginica, "--alpha", "0.3")
check(code == 2 and "alpha" in err, f"bad --alpha: exit {code} {err}")
other = write(os.path.join(tmp, "other.csv"), "Sepal.Length,Sepal.Width\n1,2\n3,4\n5,7\n")
code, _, err = run("compare", versicolor, other)
check(code == 3, f"new batch without the reference's columns: exit {code} {err}")
one = write(os.path.join(tmp, "one.csv"), "Sepal.Length,Sepal.Width,Petal.Length,Petal.Width\n1,2,3,4\n")
code, _, err = run("compare", versicolor, one)
check(code == 3 and "complete rows" in err, f"one row: exit {code} {err}")

check.finish()
