"""--threads: models and scored files are byte-identical at 1, 2 and 3 threads
(the library's fixed chunks and merge order); bad counts are usage errors."""
import os
import random
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import run, scratch  # noqa: E402

failures = []
tmp = scratch()

# Invented rows, enough for many row chunks of every kernel (4096 rows for the
# moments, 1024 for the distances), with a few gross outliers.
rng = random.Random(1515)
path = os.path.join(tmp, "rows.csv")
with open(path, "w") as f:
    f.write("a,b,c,d\n")
    for i in range(12000):
        z = rng.gauss(0, 1)
        row = [z + rng.gauss(0, 1), 2 * z + rng.gauss(0, 1), rng.gauss(5, 2), z - rng.gauss(0, 0.5)]
        if i % 1000 == 7:
            row[2] += 40
        f.write(",".join(f"{v:.6f}" for v in row) + "\n")


def read(p):
    with open(p, "rb") as f:
        return f.read()


for method in ("classical", "ledoit-wolf", "mcd", "detmcd"):
    models, scores = [], []
    for t in ("1", "2", "3"):
        model = os.path.join(tmp, f"{method}-{t}.json")
        scored = os.path.join(tmp, f"{method}-{t}.csv")
        code, _, err = run("fit", "--method", method, "--threads", t, "--quiet", path, "-o", model)
        if code != 0:
            failures.append(f"fit {method} --threads {t}: exit {code}: {err.strip()[:200]}")
            continue
        code, _, err = run("score", model, path, "--threads", t, "--quiet", "-o", scored)
        if code not in (0, 5):
            failures.append(f"score {method} --threads {t}: exit {code}: {err.strip()[:200]}")
            continue
        models.append(read(model))
        scores.append(read(scored))
    if len(set(models)) != 1:
        failures.append(f"{method}: model files differ between 1, 2 and 3 threads")
    if len(set(scores)) != 1:
        failures.append(f"{method}: scored files differ between 1, 2 and 3 threads")

for bad in ("0", "257", "-1", "two"):
    code, _, err = run("fit", "--threads", bad, "--quiet", path, "-o", os.path.join(tmp, "x.json"))
    if code != 2 or "--threads" not in err:
        failures.append(f"fit --threads {bad}: exit {code} (want 2 naming --threads): {err.strip()[:200]}")

for f in failures:
    print("FAIL:", f)
sys.exit(1 if failures else 0)
