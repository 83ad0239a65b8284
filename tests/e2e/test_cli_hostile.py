"""Every subcommand of the batch tool against hostile inputs: the CLI rows of
docs/bad-input-catalogue.md. Each case runs the built tool and checks:
  - it ends by itself (no hang: a timeout fails) with a documented exit code
    (cli_common.hpp: 0, 2, 3, 4; never 70, the defect code, never a signal);
  - a failure prints a message, and one about a file names that file;
  - nothing is written where it should not be: no temporary file is left in
    the output folder, and a previous output survives a failed run;
  - the row (subcommand, input, exit code, start of the message) is the one in
    the catalogue. To regenerate the rows after a deliberate change:
    ELLIPSA_CATALOGUE_PRINT=1 python3 tests/e2e/test_cli_hostile.py
The inputs are invented (a few cap-moulding columns) or the demo files."""
import glob
import json
import os
import subprocess
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import BIN, EXAMPLES, SRC, scratch, write  # noqa: E402

PRINT = os.environ.get("ELLIPSA_CATALOGUE_PRINT") == "1"
DOCUMENTED_EXITS = {0, 2, 3, 4}
tmp = scratch()
failures = []
rows = []


def fail(what):
    failures.append(what)
    print("FAIL:", what)


good = os.path.join(EXAMPLES, "moulding_reference.csv")
cols = "melt_temp_C,cooling_water_C,cap_mass_g"
clean_rows = "".join("%.2f,%.2f,%.4f\n" % (230 + (i * 7) % 13 * 0.5, 13 + (i * 5) % 11 * 0.1, 2.84 + (i * 3) % 7 * 0.002)
                     for i in range(60))

# The hostile files: name in the catalogue -> path.
inputs = {}
inputs["missing file"] = os.path.join(tmp, "no_such_file.csv")
inputs["empty file (0 bytes)"] = write(os.path.join(tmp, "empty.csv"), "")
inputs["header only"] = write(os.path.join(tmp, "header.csv"), cols + "\n")
inputs["one row"] = write(os.path.join(tmp, "one.csv"), cols + "\n230.1,13.2,2.851\n")
nan_rows = "".join(line.rsplit(",", 1)[0] + ",NaN\n" for line in clean_rows.splitlines())
inputs["all-NaN column"] = write(os.path.join(tmp, "nan_column.csv"), cols + "\n" + nan_rows)
inf_rows = clean_rows.splitlines()
inf_rows[4] = "230.5,inf,2.846"
inputs["infinite cell"] = write(os.path.join(tmp, "inf.csv"), cols + "\n" + "\n".join(inf_rows) + "\n")
with open(os.path.join(tmp, "garbage.csv"), "wb") as f:
    # Fixed pseudo-random bytes (a linear congruential sequence), newlines included.
    state, out = 12345, bytearray()
    for _ in range(4000):
        state = (state * 1103515245 + 12345) % (1 << 31)
        out.append(state >> 23)
    f.write(bytes(out))
inputs["garbage bytes"] = os.path.join(tmp, "garbage.csv")
with open(os.path.join(tmp, "utf16.csv"), "wb") as f:
    f.write((cols + "\n" + clean_rows).encode("utf-16"))  # with its byte order mark
inputs["UTF-16 with BOM"] = os.path.join(tmp, "utf16.csv")
with open(os.path.join(tmp, "latin1.csv"), "wb") as f:
    f.write(("temp\u00e9rature,cooling_water_C,cap_mass_g\n" + clean_rows).encode("latin-1"))
inputs["Latin-1 header"] = os.path.join(tmp, "latin1.csv")
with open(os.path.join(tmp, "huge_line.csv"), "wb") as f:
    # One line of 65 MiB with no line end: beyond the reader's 64 MiB per row.
    f.write((cols + "\n").encode())
    chunk = b"1" * (1 << 20)
    for _ in range(65):
        f.write(chunk)
inputs["line of 65 MiB"] = os.path.join(tmp, "huge_line.csv")
inputs["clean"] = write(os.path.join(tmp, "clean.csv"), cols + "\n" + clean_rows)

model = os.path.join(tmp, "model.json")
p = subprocess.run([BIN, "fit", "--method", "classical", "--quiet", inputs["clean"], "-o", model],
                   capture_output=True, text=True, timeout=300)
if p.returncode != 0:
    fail("fitting the clean model: " + p.stderr)
with open(model) as f:
    newer = json.load(f)
newer["format_version"] = 99
models = {"model": model}
models["newer-format model"] = write(os.path.join(tmp, "newer.json"), json.dumps(newer))
models["missing model"] = os.path.join(tmp, "no_such_model.json")
models["truncated model"] = write(os.path.join(tmp, "truncated.json"), open(model).read()[:200])
models["model is a CSV file"] = inputs["clean"]

out_dir = os.path.join(tmp, "out")
os.mkdir(out_dir)


def normalise(text):
    line = text.strip().splitlines()[0] if text.strip() else ""
    return line.replace(tmp, "<dir>")[:100].replace("|", "/")


def case(sub, label, args, names=None, output=None):
    """Runs `ellipsa sub args`; names: a file the message must name on failure;
    output: a path the run must not leave changed on failure."""
    previous = None
    if output is not None and os.path.isfile(output):
        with open(output, "rb") as f:
            previous = f.read()
    try:
        p = subprocess.run([BIN, sub, *args], capture_output=True, timeout=300)
    except subprocess.TimeoutExpired:
        fail(f"{sub} / {label}: no answer within 300 s (a hang)")
        return
    err = p.stderr.decode("utf-8", "replace")
    code = p.returncode
    what = f"{sub} / {label}"
    if code not in DOCUMENTED_EXITS:
        fail(f"{what}: exit {code} is not a documented code; stderr: {err[:300]}")
    if code != 0 and not err.strip():
        fail(f"{what}: exit {code} without a message")
    if code != 0 and names is not None and os.path.basename(names) not in err:
        fail(f"{what}: the message does not name {os.path.basename(names)}: {err[:300]}")
    if glob.glob(os.path.join(out_dir, ".*.tmp-*")):
        fail(f"{what}: a temporary file was left in the output folder")
    if previous is not None and code != 0:
        with open(output, "rb") as f:
            if f.read() != previous:
                fail(f"{what}: the previous output changed")
    rows.append(f"| ellipsa {sub} | {label} | {code} | {normalise(err) if code != 0 else ''} |")


# Data-file hostility for every subcommand that reads data.
data_subcommands = {
    "fit": lambda d: [d, "-o", os.path.join(out_dir, "m.json")],
    "screen": lambda d: [d, "-o", os.path.join(out_dir, "screen.csv")],
    "cluster": lambda d: [d, "--components", "1-2", "--restarts", "1", "-o", os.path.join(out_dir, "c.json")],
    "score": lambda d: [model, d, "-o", os.path.join(out_dir, "s.csv")],
    "report": lambda d: [model, d, "-o", os.path.join(out_dir, "r.html")],
    "compare": lambda d: [inputs["clean"], d, "--no-robust"],
    "inspect": lambda d: [model, "--data", d],
}
for label in ["missing file", "empty file (0 bytes)", "header only", "one row", "all-NaN column", "infinite cell",
              "garbage bytes", "UTF-16 with BOM", "Latin-1 header", "line of 65 MiB"]:
    for sub, make in data_subcommands.items():
        path = inputs[label]
        file_error = label in ("missing file", "empty file (0 bytes)", "header only", "infinite cell",
                               "UTF-16 with BOM", "line of 65 MiB")
        case(sub, label, make(path), names=path if file_error else None)

# Model-file hostility for the subcommands that read a model.
model_subcommands = {
    "score": lambda m: [m, inputs["clean"], "-o", os.path.join(out_dir, "s.csv")],
    "report": lambda m: [m, inputs["clean"], "-o", os.path.join(out_dir, "r.html")],
    "inspect": lambda m: [m],
}
for label in ["newer-format model", "missing model", "truncated model", "model is a CSV file"]:
    for sub, make in model_subcommands.items():
        case(sub, label, make(models[label]), names=models[label])

# Options out of range (exit 2, the option named).
clean = inputs["clean"]
for sub, args, label in [
        ("fit", ["--method", "mcd", "--alpha", "1.5", clean], "--alpha 1.5"),
        ("fit", ["--method", "mixture", "--components", "0", clean], "--components 0"),
        ("fit", ["--method", "mixture", "--restarts", "0", clean], "--restarts 0"),
        ("fit", ["--threads", "0", clean], "--threads 0"),
        ("fit", ["--method", "mixture", "--max-iterations", "0", clean], "--max-iterations 0"),
        ("score", [model, clean, "--level", "1.5"], "--level 1.5"),
        ("score", [model, clean, "--level", "nan"], "--level nan"),
        ("screen", [clean, "--level", "0"], "--level 0"),
        ("cluster", [clean, "--components", "101"], "--components 101"),
        ("compare", [clean, clean, "--significance", "2"], "--significance 2"),
        ("compare", [clean, clean, "--permutations", "-1"], "--permutations -1"),
        ("report", [model, clean, "--level", "-1", "-o", os.path.join(out_dir, "r.html")], "--level -1"),
        ("inspect", [model, "--no-such-option"], "unknown option")]:
    case(sub, label, args)

# Outputs that cannot be written: the message names the file; a previous
# output survives a failed run byte for byte.
missing_dir = os.path.join(tmp, "no_such_folder", "out.csv")
for sub, make in [("fit", lambda o: [clean, "-o", o]), ("screen", lambda o: [clean, "-o", o]),
                  ("score", lambda o: [model, clean, "-o", o]), ("cluster", lambda o: [clean, "--components", "1",
                                                                                      "-o", o]),
                  ("report", lambda o: [model, clean, "-o", o]), ("compare", lambda o: [clean, clean, "--no-robust",
                                                                                        "--html", o])]:
    case(sub, "output folder missing", make(missing_dir), names=missing_dir)
    case(sub, "output is a folder", make(out_dir), names=out_dir)
    kept = os.path.join(out_dir, "kept_" + sub)
    write(kept, "the previous output\n")
    bad_input = [inputs["garbage bytes"] if a == clean else a for a in make(kept)]
    case(sub, "output kept when the input is bad", bad_input, output=kept)

if PRINT:
    print("\n".join(rows))
else:
    doc = open(os.path.join(SRC, "docs", "bad-input-catalogue.md"), encoding="utf-8").read()
    for r in rows:
        if r not in doc:
            fail("row missing from docs/bad-input-catalogue.md (regenerate with ELLIPSA_CATALOGUE_PRINT=1): " + r)
    print(f"{len(rows)} hostile CLI inputs, {len(failures)} failures")
sys.exit(1 if failures else 0)
