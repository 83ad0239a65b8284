"""--threads: models and scored files are byte-identical at 1, 2 and 3 threads
(the library's fixed chunks and merge order); bad counts are usage errors."""
import os
import random
import resource
import signal
import subprocess
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import BIN, run, scratch  # noqa: E402

failures = []
tmp = scratch()

# Invented rows, enough for many row chunks of every kernel (4096 rows for the
# moments, 1024 for the distances), with a few gross outliers.
rng = random.Random(1515)


def write_rows(p, count, every, first, column, shift):
    """Four correlated invented columns; rows i with i % every == first get
    `shift` added to `column`."""
    with open(p, "w") as f:
        f.write("a,b,c,d\n")
        for i in range(count):
            z = rng.gauss(0, 1)
            row = [z + rng.gauss(0, 1), 2 * z + rng.gauss(0, 1), rng.gauss(5, 2), z - rng.gauss(0, 0.5)]
            if i % every == first:
                row[column] += shift
            f.write(",".join(f"{v:.6f}" for v in row) + "\n")


path = os.path.join(tmp, "rows.csv")
write_rows(path, 12000, 1000, 7, 2, 40)


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

# Scoring overlaps reading, scoring and writing on more than one thread
# (bindings-c/cli/score_stream.hpp). A longer file (five chunks of 8192 rows)
# with a gross outlier every 997 rows, scored at level 0.9999 so that the
# flags are sparse and the first 20 flagged lines come from three chunks: the
# scored file, the summary on standard error (those 20 lines) and the JSON
# summary are the same at 1, 2 and 3 threads.
long_path = os.path.join(tmp, "long.csv")
write_rows(long_path, 40000, 997, 3, 1, 30)
long_model = os.path.join(tmp, "long.json")
code, _, err = run("fit", "--method", "classical", "--quiet", long_path, "-o", long_model)
if code != 0:
    failures.append(f"fit long file: exit {code}: {err.strip()[:200]}")
seen = []
scored = os.path.join(tmp, "long-scored.csv")  # one name: the summaries name the file
for t in ("1", "2", "3"):
    code_j, out_j, _ = run("score", long_model, long_path, "--threads", t, "--level", "0.9999", "--json", "-o", scored)
    code, out, err = run("score", long_model, long_path, "--threads", t, "--level", "0.9999", "-o", scored)
    if code != 0 or code_j != 0:
        failures.append(f"score long file --threads {t}: exit {code}/{code_j}: {err.strip()[:200]}")
        continue
    seen.append((read(scored), err, out_j))
if len(seen) == 3:
    if len({s[0] for s in seen}) != 1:
        failures.append("long file: scored files differ between 1, 2 and 3 threads")
    if len({s[1] for s in seen}) != 1:
        failures.append("long file: the summaries differ between 1, 2 and 3 threads:\n" + "\n--\n".join(s[1] for s in seen))
    if len({s[2] for s in seen}) != 1:
        failures.append("long file: the JSON summaries differ between 1, 2 and 3 threads")
    listed = [int(line.split()[1].rstrip(":")) for line in seen[0][1].splitlines() if line.startswith("  line ")]
    if "and " not in seen[0][1] or len(listed) != 20 or max(listed) <= 2 * 8192:
        failures.append("long file: the summary should list 20 flagged lines from three chunks and say how many "
                        "more: " + seen[0][1][:300])

# Errors: an infinite cell on data line 20001 (chunk 3) and a word on line
# 30001 (chunk 4). On one thread the infinite cell stops the run first; on
# more, reading runs ahead of scoring and writing, yet the message is the same
# and no output file is left behind.
with open(long_path) as f:
    lines = f.readlines()
lines[20001] = "1.0,inf,3.0,4.0\n"
lines[30001] = "1.0,two,3.0,4.0\n"
bad_path = os.path.join(tmp, "bad.csv")
with open(bad_path, "w") as f:
    f.writelines(lines)
errors = set()
scored = os.path.join(tmp, "bad-scored.csv")
for t in ("1", "2", "3"):
    code, _, err = run("score", long_model, bad_path, "--threads", t, "--quiet", "-o", scored)
    if code == 0 or os.path.exists(scored):
        failures.append(f"bad file --threads {t}: exit {code}, output left: {os.path.exists(scored)}")
    errors.add((code, err))
if len(errors) != 1:
    failures.append("bad file: the error differs between 1, 2 and 3 threads: " + repr(errors))
elif "20002" not in next(iter(errors))[1]:  # line 20002 of the file (the header is line 1)
    failures.append("bad file: the error should name line 20002: " + repr(errors))

# A writing error before a later reading error: the file-size limit (256 KiB,
# RLIMIT_FSIZE) stops the writes within the first chunk's output, and a word
# sits on line 30002 (chunk 4). On one thread the run never reaches line
# 30002; on more, reading runs ahead, yet the earliest chunk's error, the
# writing one, is the one reported, with the same message and exit code, and
# no output (nor its temporary file) is left behind. Whether reading has
# reached line 30002 when the writer fails depends on timing: the test proves
# the rule only in the runs where it has.
lines[20001] = lines[20000]  # only the word on line 30002 is left planted
late_path = os.path.join(tmp, "late-bad.csv")
with open(late_path, "w") as f:
    f.writelines(lines)


def limit_file_size():
    signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # write() then fails with EFBIG
    resource.setrlimit(resource.RLIMIT_FSIZE, (256 * 1024, 256 * 1024))


errors = set()
scored = os.path.join(tmp, "late-scored.csv")
for t in ("1", "2", "3"):
    p = subprocess.run([BIN, "score", long_model, late_path, "--threads", t, "--quiet", "-o", scored],
                       capture_output=True, text=True, preexec_fn=limit_file_size, timeout=600)
    left = [f for f in os.listdir(tmp) if f.startswith("late-scored")]  # the output or its temporary file
    if p.returncode != 3 or left:
        failures.append(f"write error first --threads {t}: exit {p.returncode} (want 3), files left: "
                        f"{left}: {p.stderr.strip()[:200]}")
    errors.add((p.returncode, p.stderr))
if len(errors) != 1:
    failures.append("write error first: the error differs between 1, 2 and 3 threads: " + repr(errors))
elif "File too large" not in next(iter(errors))[1] or "30002" in next(iter(errors))[1]:
    failures.append("write error first: the writing error should be reported, not line 30002: " + repr(errors))

for bad in ("0", "257", "-1", "two"):
    code, _, err = run("fit", "--threads", bad, "--quiet", path, "-o", os.path.join(tmp, "x.json"))
    if code != 2 or "--threads" not in err:
        failures.append(f"fit --threads {bad}: exit {code} (want 2 naming --threads): {err.strip()[:200]}")

for f in failures:
    print("FAIL:", f)
sys.exit(1 if failures else 0)
