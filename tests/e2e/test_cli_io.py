"""CSV dialects, standard input and output, and atomic results."""
import json
import os
import signal
import subprocess
import sys
import time

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import BIN, EXAMPLES, read_csv, run, scratch, write  # noqa: E402

failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


tmp = scratch()
rows = [(1.5, 2.25, -3.0), (2.0, 1.75, -2.5), (0.5, 3.5, -1.0), (1.25, 2.0, -4.5),
        (3.0, 0.5, -2.0), (2.5, 2.75, -3.25), (1.0, 1.0, -1.5), (0.75, 3.0, -3.75)]
names = ("melt", "pressure", "mass")


def table(sep, dec, eol, bom=False, quote=False):
    def num(v):
        s = repr(v)
        return s.replace(".", ",") if dec == "," else s
    head = sep.join(f'"{n}"' if quote else n for n in names)
    body = eol.join(sep.join(num(v) for v in r) for r in rows)
    return ("\ufeff" if bom else "") + head + eol + body + eol


def fitted_location(path, *extra):
    code, out, err = run("fit", path, *extra)
    check(code == 0, f"fit {os.path.basename(path)} {extra}: {err.strip()}")
    return json.loads(out)["location"] if code == 0 else None


reference = fitted_location(write(os.path.join(tmp, "plain.csv"), table(",", ".", "\n")))
dialects = {
    "semicolon_decimal_comma_crlf_bom.csv": (table(";", ",", "\r\n", bom=True), ["--decimal-comma"]),
    "tab_quoted.csv": (table("\t", ".", "\n", quote=True), []),
    "semicolon_explicit.csv": (table(";", ".", "\n"), ["--separator", "semicolon"]),
}
for name, (text, extra) in dialects.items():
    loc = fitted_location(write(os.path.join(tmp, name), text), *extra)
    check(loc == reference, f"{name} gives the same model as the plain CSV")

# Missing markers are missing: the row is dropped from the fit and counted.
marked = table(",", ".", "\n") + "NA,1.0,2.0\n1.0,,2.0\n1.0,N/A,null\n"
code, out, err = run("fit", write(os.path.join(tmp, "marked.csv"), marked), "--json", "-o", os.path.join(tmp, "m.json"))
check(code == 0 and json.loads(out)["rows_dropped"] == 3, f"missing markers dropped and counted: {out} {err}")

# Standard input and output: fit from stdin to stdout, score from stdin to stdout.
data = open(os.path.join(EXAMPLES, "moulding_reference.csv")).read()
code, model_text, err = run("fit", "-", stdin=data)
check(code == 0 and json.loads(model_text)["kind"] == "gaussian", "fit reads stdin and writes the model to stdout")
model = write(os.path.join(tmp, "model.json"), model_text)
code, scored, err = run("score", model, "-", stdin=data)
check(code == 0 and len(read_csv(scored, from_text=True)) == 300, "score reads stdin and writes stdout")
def significant(text):
    """The significant digits of a decimal text ("-0.00120e-5" -> "12")."""
    mantissa = text.lower().split("e")[0].replace("-", "").replace(".", "")
    return mantissa.strip("0")


# Computed columns: 10 significant digits by default, or the exact shortest
# form. Python's float() and repr() (the reference) read both; the rounded
# value agrees with the exact one to half a unit in the tenth digit.
code, exact, err = run("score", model, "-", "--digits", "exact", stdin=data)
exact_rows = read_csv(exact, from_text=True) if code == 0 else []
rounded_rows = read_csv(scored, from_text=True)
check(code == 0 and len(exact_rows) == len(rounded_rows), f"score --digits exact: {err.strip()}")
for e_row, r_row in zip(exact_rows, rounded_rows):
    for key in ("sq_distance", "p_value", "contrib_melt_temp_C"):
        e_val, r_val = float(e_row[key]), float(r_row[key])
        check(len(significant(r_row[key])) <= 10, f"{key} {r_row[key]} has at most 10 significant digits")
        check(abs(e_val - r_val) <= 5e-10 * abs(e_val), f"{key}: {r_row[key]} rounds {e_row[key]}")
        check(significant(e_row[key]) == significant(repr(e_val)), f"{key} {e_row[key]}: shortest exact form")
code, shown, err = run("inspect", "-", stdin=model_text)
check(code == 0 and "classical" in shown, "inspect reads the model from stdin")

# A failed run leaves the previous output untouched and no temporary file.
out_path = write(os.path.join(tmp, "out.csv"), "previous contents\n")
code, _, _ = run("score", model, write(os.path.join(tmp, "bad.csv"), "shot_id,melt_temp_C\nx,abc\n"), "-o", out_path)
check(code == 3, "scoring a bad file fails with 3")
check(open(out_path).read() == "previous contents\n", "the previous output survives a failed run")
check(not [f for f in os.listdir(tmp) if ".tmp-" in f], "no temporary file is left behind")

# Killed mid-write (SIGKILL): the old output survives intact.
big = os.path.join(tmp, "big.csv")
with open(big, "w") as f:
    f.write(data.splitlines()[0] + "\n")
    body = "\n".join(data.splitlines()[1:]) + "\n"
    for _ in range(4000):  # 1.2 million rows
        f.write(body)
write(out_path, "previous contents\n")
p = subprocess.Popen([BIN, "score", model, big, "-o", out_path], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
time.sleep(0.5)
killed = p.poll() is None
p.send_signal(signal.SIGKILL)
p.wait()
check(killed, "the scoring run was still writing when killed (make the file bigger if this fails)")
check(open(out_path).read() == "previous contents\n", "the previous output survives SIGKILL")

# A completed run replaces the output.
code, _, err = run("score", model, big, "-o", out_path, "--quiet")
check(code == 0, f"scoring the big file: {err}")
with open(out_path) as f:
    n_lines = sum(1 for _ in f)
check(n_lines == 1 + 4000 * 300, f"the scored output has every row ({n_lines})")

# Progress: drawn on a terminal, absent when stderr is a file or pipe (above,
# every run captured stderr; none may contain the bar's carriage returns).
code, _, err = run("fit", "--method", "mcd", os.path.join(EXAMPLES, "moulding_reference.csv"), "-o",
                   os.path.join(tmp, "p.json"))
check(code == 0 and "%" not in err and "[" not in err, "no progress drawn when stderr is not a terminal")
tty = subprocess.run(["script", "-qec", f"{BIN} fit --method mcd {os.path.join(EXAMPLES, 'moulding_reference.csv')} "
                      f"-o {os.path.join(tmp, 'p2.json')}", "/dev/null"], capture_output=True, text=True, timeout=120)
check(tty.returncode == 0 and "%]" not in tty.stdout and "] " in tty.stdout and "%" in tty.stdout,
      f"a progress bar is drawn on a terminal: {tty.stdout[:200]!r}")
code, _, err = run("fit", "--method", "mcd", "--quiet", os.path.join(EXAMPLES, "moulding_reference.csv"), "-o",
                   os.path.join(tmp, "p3.json"))
check(code == 0 and err == "", "--quiet prints nothing")

print(f"{len(failures)} failures")
sys.exit(1 if failures else 0)
