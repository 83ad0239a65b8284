"""ellipsa-mpi under mpirun -np 3 against single-process runs.

Sources of the expected values, beside each check:
- "reference merge": tests/mpi/mpi_reference, one process that adds the same
  chunks to one accumulator per rank and merges them in the same binomial tree
  through the C interface (no MPI). Equality is bit for bit (file bytes).
- "ellipsa fit/score": the batch tool on all rows in one process. Fits agree to
  rounding only (a different merge order); the tolerance is stated at the check.
Skips (exit 77, ctest SKIP_RETURN_CODE) only when mpirun or the driver is absent.
"""
import json
import os
import random
import shutil
import subprocess
import sys
import time

sys.path.insert(0, os.path.join(os.environ["ELLIPSA_SOURCE_DIR"], "tests", "e2e"))
from e2e_util import BIN, EXAMPLES, Checks, scratch  # noqa: E402

MPI_BIN = os.environ.get("ELLIPSA_MPI_BIN", "")
REFERENCE = os.environ["ELLIPSA_MPI_REFERENCE"]
MPIRUN = shutil.which("mpirun")
if not MPIRUN or not MPI_BIN or not os.path.exists(MPI_BIN):
    print("SKIPPED: " + ("mpirun not found (make deps installs openmpi-bin)" if not MPIRUN
                         else "ellipsa-mpi was not built (no MPI found at configure time)"))
    sys.exit(77)

check = Checks()
work = scratch()


def mpirun(np, *args, timeout=300):
    cmd = [MPIRUN, "--oversubscribe", "--allow-run-as-root", "-np", str(np), MPI_BIN, *args]
    p = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, cwd=work)
    return p.returncode, p.stdout, p.stderr


def run(cmd):
    p = subprocess.run(cmd, capture_output=True, text=True, timeout=300, cwd=work)
    if p.returncode != 0:
        raise AssertionError(f"{' '.join(cmd)}: exit {p.returncode}\n{p.stderr[:2000]}")
    return p


def path(name):
    return os.path.join(work, name)


def read_bytes(name):
    with open(path(name), "rb") as f:
        return f.read()


# Generated set: 20000 rows, 5 columns near 1e4 (a large offset), correlated,
# seeded; written with repr (exact) into 5 files of uneven sizes and one whole file.
rng = random.Random(20261203)
header = "id,a,b,c,d,e"
rows = []
for i in range(20000):
    z = rng.gauss(0.0, 1.0)
    vals = [1e4 + (j + 1) * (0.6 * z + rng.gauss(0.0, 1.0)) for j in range(5)]
    rows.append(f"r{i}," + ",".join(repr(v) for v in vals))
sizes = [3000, 5000, 1, 6999, 5001]
files, at = [], 0
for k, n in enumerate(sizes):
    name = f"part{k}.csv"
    with open(path(name), "w") as f:
        f.write(header + "\n" + "\n".join(rows[at:at + n]) + "\n")
    files.append(name)
    at += n
with open(path("whole.csv"), "w") as f:
    f.write(header + "\n" + "\n".join(rows) + "\n")


def close(a, b, scale, tol):
    return abs(a - b) <= tol * scale


def compare_fits(m1, m2, tol, what):
    """Location within tol * sd, scatter within tol * sqrt(s_ii s_jj)."""
    s = m2["scatter"]
    p = len(s)
    sd = [s[j][j] ** 0.5 for j in range(p)]
    ok = all(close(m1["location"][j], m2["location"][j], sd[j], tol) for j in range(p))
    ok = ok and all(close(m1["scatter"][i][j], s[i][j], sd[i] * sd[j], tol) for i in range(p) for j in range(p))
    if "shrinkage_intensity" in m2:
        ok = ok and close(m1["shrinkage_intensity"], m2["shrinkage_intensity"], 1.0, tol)
    check(ok, what)


# 1. Fits on files, 3 ranks (rank 0: part0; rank 1: part1, part2; rank 2: part3, part4).
for method in ("classical", "ledoit-wolf", "oas"):
    code, _, err = mpirun(3, "fit", "--method", method, "-o", f"mpi-{method}.json", *files)
    check(code == 0, f"{method}: mpirun -np 3 fit exits 0 ({err[-500:]})")
    run([REFERENCE, "3", method, path(f"ref-{method}.json"), *[path(f) for f in files]])
    # reference merge: the same chunks in the same tree in one process, bit for bit
    check(read_bytes(f"mpi-{method}.json") == read_bytes(f"ref-{method}.json"),
          f"{method}: model bytes of -np 3 equal the single-process reference merge")
    run([BIN, "fit", "--method", method, path("whole.csv"), "-o", path(f"one-{method}.json")])
    # ellipsa fit on the whole file: equal to rounding; 1e-12 relative to the
    # spread (measured: at most 3.3e-16 here; offset 1e4, sd 1-5)
    compare_fits(json.loads(read_bytes(f"mpi-{method}.json")), json.loads(read_bytes(f"one-{method}.json")),
                 1e-12, f"{method}: -np 3 equals ellipsa fit on the whole file within 1e-12 of the spread")

# 2. Four ranks (a full tree, one file less than... rank 0 gets part0, rank 3 parts 3-4).
code, _, err = mpirun(4, "fit", "--method", "ledoit-wolf", "-o", "mpi4.json", *files)
check(code == 0, f"-np 4 fit exits 0 ({err[-300:]})")
run([REFERENCE, "4", "ledoit-wolf", path("ref4.json"), *[path(f) for f in files]])
check(read_bytes("mpi4.json") == read_bytes("ref4.json"),
      "ledoit-wolf -np 4: bytes equal the reference merge in the 4-rank tree")  # reference merge

# 3. The demo data, one file split by rows.
demo = os.path.join(EXAMPLES, "moulding_line.csv")
for method in ("classical", "oas"):
    code, _, err = mpirun(3, "fit", "--method", method, "--split-rows", "-o", f"demo3-{method}.json", demo)
    check(code == 0, f"demo {method} --split-rows exits 0 ({err[-300:]})")
    run([REFERENCE, "3", method, path(f"demo-ref-{method}.json"), "--split-rows", demo])
    check(read_bytes(f"demo3-{method}.json") == read_bytes(f"demo-ref-{method}.json"),
          f"demo {method}: -np 3 --split-rows equals the reference merge of the same row ranges")  # reference merge
    code, _, err = mpirun(1, "fit", "--method", method, "--split-rows", "-o", f"demo1-{method}.json", demo)
    run([BIN, "fit", "--method", method, demo, "-o", path(f"demo-one-{method}.json")])
    # ellipsa fit: one rank adds the same chunks as the batch tool, so bit for bit
    check(read_bytes(f"demo1-{method}.json") == read_bytes(f"demo-one-{method}.json"),
          f"demo {method}: -np 1 gives the bytes of ellipsa fit")

# 4. Scoring: the parts, concatenated, are the rows of ellipsa score on each file.
os.mkdir(path("scores"))
code, out, err = mpirun(3, "score", "mpi-ledoit-wolf.json", *files, "--output-dir", "scores", "--json")
check(code == 0, f"score -np 3 exits 0 ({err[-300:]})")
expected, flagged = [], 0
for f in files:
    run([BIN, "score", path("mpi-ledoit-wolf.json"), path(f), "-o", path(f + ".scored")])
    with open(path(f + ".scored")) as g:
        lines = g.read().splitlines()
    head, body = lines[0], lines[1:]
    expected += body
    flag_col = head.split(",").index("flag")
    flagged += sum(1 for line in body if line.split(",")[flag_col] == "1")
got = []
for r in range(3):
    with open(path(f"scores/scores-rank-{r}.csv")) as g:
        lines = g.read().splitlines()
    check(lines[0] == head, f"rank {r}: its part has the header of ellipsa score")
    got += lines[1:]
check(got == expected, "score parts, in rank order, equal ellipsa score of the files row for row")  # ellipsa score
summary = json.loads(read_bytes("scores/summary.json"))
check(summary["rows"] == 20000 and summary["flagged"] == flagged,
      f"summary: 20000 rows (generated) and {flagged} flagged (ellipsa score); got {summary['rows']}, {summary['flagged']}")
check(json.loads(out)["rows"] == 20000, "--json summary on standard output")

# 5. A bad file on rank 2: the job stops naming rank, file and line; nothing is left.
with open(path("part4.csv")) as f:
    lines = f.read().splitlines()
lines[16] = lines[16].split(",")[0] + ",oops," + ",".join(lines[16].split(",")[2:])  # line 17 of the file
with open(path("bad4.csv"), "w") as f:
    f.write("\n".join(lines) + "\n")
os.mkdir(path("faults"))
bad_files = files[:4] + ["bad4.csv"]
code, _, err = mpirun(3, "fit", "-o", "faults/model.json", *bad_files)
check(code == 3, f"bad file: fit exits 3 (got {code})")
check("rank 2: bad4.csv:17:" in err, f"bad file: the message names rank 2, the file and line 17: {err[:400]}")
code, _, err = mpirun(3, "score", "mpi-ledoit-wolf.json", *bad_files, "--output-dir", "faults")
check(code == 3, f"bad file: score exits 3 (got {code})")
check("rank 2: bad4.csv:17:" in err, "bad file: score names rank 2, the file and line 17")
check(os.listdir(path("faults")) == [], f"bad file: no model, part, summary or temporary file left: {os.listdir(path('faults'))}")

# 6. A rank that never answers (its file is a FIFO nobody writes): the others
# give up after --timeout and end the job; no model is written.
os.mkfifo(path("stuck.csv"))
start = time.monotonic()
code, _, err = mpirun(3, "--timeout", "3", "fit", "-o", "faults/model.json", *files[:4], "stuck.csv", timeout=120)
elapsed = time.monotonic() - start
check(code != 0, "stuck rank: the job fails")
check("no answer within 3 s" in err, f"stuck rank: the message says why: {err[:300]}")
check(elapsed < 60, f"stuck rank: the job ended after {elapsed:.1f} s (timeout 3 s), not a hang")
check(os.listdir(path("faults")) == [], "stuck rank: no model or temporary file left")

# 7. A rank killed mid-run (SIGKILL to rank 2, stuck on the FIFO, found by
# the OMPI_COMM_WORLD_RANK in its environment): the job ends, no model.
# mpirun ends it on the death (about 1 s here); should it miss it, the other
# ranks' --timeout of 60 s ends it with MPI_Abort: a bounded end either way.
def rank_pid(marker, rank):
    for pid in os.listdir("/proc"):
        try:
            with open(f"/proc/{pid}/cmdline", "rb") as f:
                if marker not in f.read():
                    continue
            with open(f"/proc/{pid}/environ", "rb") as f:
                if f"OMPI_COMM_WORLD_RANK={rank}".encode() in f.read().split(b"\0"):
                    return int(pid)
        except OSError:
            continue
    return None


cmd = [MPIRUN, "--oversubscribe", "--allow-run-as-root", "-np", "3", MPI_BIN, "--timeout", "60", "fit",
       "-o", "faults/killed.json", *files[:4], "stuck.csv"]
job = subprocess.Popen(cmd, cwd=work, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
victim = None
for _ in range(200):
    victim = rank_pid(b"faults/killed.json", 2)
    if victim:
        break
    time.sleep(0.1)
check(victim is not None, "killed rank: rank 2 of the job was found")
# Kill it only once it is blocked opening the FIFO (past MPI_Init, as a rank
# dies mid-run): on a loaded machine a rank found at once may still be starting,
# and a rank killed before MPI_Init was seen to leave mpirun waiting.
def blocked_on_fifo(pid):
    try:
        with open(f"/proc/{pid}/wchan") as f:
            return f.read().strip() == "wait_for_partner"  # Linux: open() of a FIFO with no writer
    except OSError:
        return False


for _ in range(600):
    if victim is None or blocked_on_fifo(victim):
        break
    time.sleep(0.1)
check(victim is None or blocked_on_fifo(victim), "killed rank: rank 2 reached its FIFO within 60 s")
start = time.monotonic()
if victim:
    os.kill(victim, 9)
try:
    _, err = job.communicate(timeout=120)
except subprocess.TimeoutExpired:
    job.kill()
    err = job.communicate()[1]
elapsed = time.monotonic() - start
check(job.returncode != 0, "killed rank: the job fails")
check(elapsed < 100, f"killed rank: the job ended {elapsed:.1f} s after the kill (timeout 60 s), not a hang")
check(os.listdir(path("faults")) == [], "killed rank: no model or temporary file left")

if not check.failures:
    shutil.rmtree(work, ignore_errors=True)
check.finish()
