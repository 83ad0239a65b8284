#!/usr/bin/env python3
"""End-to-end test of the scheduled-job kit (docs/examples/scheduled-job/).

  test_nightly_job.py job     runs ellipsa-nightly-screen on the demo files
  test_nightly_job.py units   systemd-analyze verify of the service and timer
                              (exit 77 = skipped when systemd-analyze is absent),
                              and the cron line's form

The job test, in a scratch directory: a run while another process holds the
lock does nothing and says so; run 1 scores the new batch's mould A shots
against a mould A profile; run 2 finds the lock released, scores only the file
that arrived since (the shift's mould A shots), appends a second summary and
removes an output older than the retention period; run 3 meets a file with an
unreadable cell: it fails with exit 3, its summary names the file and the
cell, every earlier output survives byte for byte and nothing is removed.
Expected counts come from the input files (rows) and from `ellipsa score
--json` run directly (flags). The demo data are invented (examples/README.md).
Needs ELLIPSA_BIN and ELLIPSA_SOURCE_DIR.
"""
import fcntl
import glob
import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

BIN = os.environ.get("ELLIPSA_BIN", "")
SRC = os.environ.get("ELLIPSA_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
KIT = os.path.join(SRC, "docs", "examples", "scheduled-job")
JOB = os.path.join(KIT, "ellipsa-nightly-screen")
FIELDS = ("time", "status", "exit_code", "input", "rows", "flagged", "model", "level", "outputs",
          "removed", "duration_s", "message")
failures = 0


def check(ok, what):
    global failures
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures += 1


def mould_a(src, dst):
    with open(src) as f, open(dst, "w") as g:
        for i, line in enumerate(f):
            if i == 0 or line.startswith("A-"):
                g.write(line)


def data_rows(path):
    with open(path) as f:
        return sum(1 for _ in f) - 1


def sha(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def run_job(work, extra=()):
    cmd = ["bash", JOB, "--model", os.path.join(work, "profile.json"), "--inbox", os.path.join(work, "inbox"),
           "--outdir", os.path.join(work, "out"), "--keep-days", "30", "--ellipsa", BIN] + list(extra)
    return subprocess.run(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, universal_newlines=True)


def log_lines(work):
    path = os.path.join(work, "out", "runs.jsonl")
    if not os.path.exists(path):
        return []
    with open(path) as f:
        return [json.loads(line) for line in f]


def direct_flags(work, data):
    out = subprocess.run([BIN, "score", os.path.join(work, "profile.json"), data, "-o",
                          os.path.join(work, "direct.csv"), "--json"], stdout=subprocess.PIPE, check=True,
                         universal_newlines=True)
    return json.loads(out.stdout)["flagged"]


def test_job():
    work = tempfile.mkdtemp(prefix="ellipsa-job-")
    try:
        inbox, out = os.path.join(work, "inbox"), os.path.join(work, "out")
        os.makedirs(inbox)
        os.makedirs(out)
        mould_a(os.path.join(SRC, "examples", "moulding_reference.csv"), os.path.join(work, "reference_A.csv"))
        subprocess.run([BIN, "fit", "--method", "mcd", "--seed", "1", "--quiet",
                        os.path.join(work, "reference_A.csv"), "-o", os.path.join(work, "profile.json")], check=True)
        batch = os.path.join(inbox, "new_batch_A.csv")
        mould_a(os.path.join(SRC, "examples", "moulding_new_batch.csv"), batch)

        # Another process holds the lock: the job does nothing and says why.
        with open(os.path.join(out, ".ellipsa-nightly-screen.lock"), "a") as holder:
            fcntl.flock(holder, fcntl.LOCK_EX)
            r = run_job(work)
            fcntl.flock(holder, fcntl.LOCK_UN)
        logs = log_lines(work)
        check(r.returncode == 75 and len(logs) == 1 and logs[0]["status"] == "locked"
              and "holds the lock" in logs[0]["message"] and logs[0]["exit_code"] == 75,
              "lock held elsewhere: exit 75, summary 'locked' (exit %d)" % r.returncode)
        check(not glob.glob(os.path.join(out, "*.csv")), "lock held elsewhere: nothing written")

        # Run 1: the new batch.
        expected = direct_flags(work, batch)
        r = run_job(work)
        logs = log_lines(work)
        s = logs[-1]
        print("  run 1 summary: " + json.dumps(s))
        check(all(k in s for k in FIELDS), "summary has time, input, rows, flagged, model, exit code, duration")
        check(s["rows"] == data_rows(batch) == 120, "run 1: 120 rows, as many as the file's data lines")
        check(s["flagged"] == expected, "run 1: %d flagged, as `ellipsa score` says directly" % expected)
        want = 5 if expected > 0 else 0
        check(r.returncode == want and s["exit_code"] == want, "run 1: exit %d (5 when rows are flagged)" % want)
        check(s["input"] == [batch] and s["model"].endswith("profile.json"), "run 1: input and model named")
        check(r.stdout.strip() == json.dumps(s) or json.loads(r.stdout) == s, "run 1: summary also on stdout")
        first = s["outputs"]
        check(len(first) == 1 and re.search(r"new_batch_A\.scored\.\d{8}T\d{6}Z\.csv$", first[0])
              and data_rows(first[0]) == 120, "run 1: scored rows in a dated file")
        first_sum = sha(first[0])

        # Run 2: the lock is free again; only the file that arrived since is scored.
        shift = os.path.join(inbox, "line_A.csv")
        mould_a(os.path.join(SRC, "examples", "moulding_line.csv"), shift)
        stale = os.path.join(out, "old_batch.scored.20000101T000000Z.csv")
        open(stale, "w").write("shot_id\n")
        expected = direct_flags(work, shift)
        r = run_job(work)
        logs = log_lines(work)
        s = logs[-1]
        print("  run 2 summary: " + json.dumps(s))
        check(len(logs) == 3, "run 2: a second run summary appended (3 lines with the locked one)")
        check(s["input"] == [shift], "run 2: only the new file is scored (the batch of run 1 is not redone)")
        check(s["rows"] == data_rows(shift) == 360 and s["flagged"] == expected,
              "run 2: 360 rows, %d flagged as `ellipsa score` says" % expected)
        check(r.returncode == s["exit_code"] == (5 if expected else 0), "run 2: exit code matches the summary")
        check(not os.path.exists(stale) and s["removed"] == 1, "run 2: an output from 2000 removed (keep 30 days)")
        check(os.path.exists(first[0]) and sha(first[0]) == first_sum, "run 2: run 1's output kept")
        kept = {p: sha(p) for p in first + s["outputs"]}

        # Run 3: a broken input fails loudly and harms nothing.
        with open(os.path.join(inbox, "broken.csv"), "w") as f:
            f.write("shot_id,timestamp,mould,melt_temp_C,cooling_water_C,injection_pressure_bar,hold_time_s,"
                    "cycle_time_s,cap_mass_g,cap_diameter_mm\n")
            f.write("A-9001,2024-05-16T06:00:12,A,230.1,14.0,abc,3.0,12.0,2.85,28.05\n")
        stale2 = os.path.join(out, "old_batch.scored.20000102T000000Z.csv")
        open(stale2, "w").write("shot_id\n")
        r = run_job(work)
        logs = log_lines(work)
        s = logs[-1]
        print("  run 3 summary: " + json.dumps(s))
        check(r.returncode == 3 and s["exit_code"] == 3 and s["status"] == "failed", "run 3: exit 3, status failed")
        check("broken.csv" in s["message"] and "cannot read 'abc'" in s["message"]
              and "injection_pressure_bar" in s["message"], "run 3: the summary says which file and cell, and why")
        check(all(os.path.exists(p) and sha(p) == h for p, h in kept.items()), "run 3: earlier outputs intact")
        check(os.path.exists(stale2) and s["removed"] == 0, "run 3: a failing run removes nothing")
        check(not glob.glob(os.path.join(out, ".*.partial")) and not glob.glob(os.path.join(out, "broken*")),
              "run 3: no partial or half-written output")
        check(len(logs) == 4 and [l["exit_code"] for l in logs] == [75, logs[1]["exit_code"], logs[2]["exit_code"], 3],
              "four runs, four summary lines, each with its exit code")
    finally:
        shutil.rmtree(work, ignore_errors=True)


def test_units():
    tool = shutil.which("systemd-analyze")
    cron = open(os.path.join(KIT, "ellipsa-nightly-screen.cron")).read().splitlines()
    entries = [l.split() for l in cron if l.strip() and not l.startswith("#") and "=" not in l.split()[0]]
    help_text = subprocess.run(["bash", JOB, "--help"], stdout=subprocess.PIPE, universal_newlines=True).stdout
    ok = len(entries) == 1 and len(entries[0]) > 7 and entries[0][6].endswith("/ellipsa-nightly-screen")
    opts = [w for w in entries[0][7:] if w.startswith("--")] if ok else []
    check(ok and all(re.match(r"^[\d*/,-]+$", f) for f in entries[0][:5]) and entries[0][5] == "ellipsa",
          "cron line: five time fields, a user, the job")
    check(opts and all(o in help_text for o in opts), "cron line: every option is one the job documents: %s" % opts)
    if not tool:
        print("skipped: systemd-analyze not found, unit files not verified")
        return 77
    work = tempfile.mkdtemp(prefix="ellipsa-units-")
    try:
        service = open(os.path.join(KIT, "ellipsa-nightly-screen.service")).read()
        service = service.replace("/usr/local/bin/ellipsa-nightly-screen", JOB)
        service = service.replace("/etc/ellipsa/screen-job.env", os.path.join(KIT, "screen-job.env"))
        open(os.path.join(work, "ellipsa-nightly-screen.service"), "w").write(service)
        shutil.copy(os.path.join(KIT, "ellipsa-nightly-screen.timer"), work)
        r = subprocess.run([tool, "verify", "ellipsa-nightly-screen.service", "ellipsa-nightly-screen.timer"],
                           cwd=work, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, universal_newlines=True)
        check(r.returncode == 0 and not r.stdout.strip(), "systemd-analyze verify: service and timer clean %s" % r.stdout)
        # The check can fail: a misspelt timer key is refused.
        timer = open(os.path.join(work, "ellipsa-nightly-screen.timer")).read().replace("OnCalendar=", "OnCalender=")
        open(os.path.join(work, "broken.timer"), "w").write(timer)
        r = subprocess.run([tool, "verify", "broken.timer"], cwd=work, stdout=subprocess.PIPE,
                           stderr=subprocess.STDOUT, universal_newlines=True)
        check(r.returncode != 0 and "OnCalender" in r.stdout, "systemd-analyze verify refuses a broken copy")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return 0


def main():
    if len(sys.argv) != 2 or sys.argv[1] not in ("job", "units"):
        sys.exit(__doc__)
    if sys.argv[1] == "job":
        if not BIN:
            sys.exit("ELLIPSA_BIN not set")
        test_job()
        code = 0
    else:
        code = test_units()
    if failures:
        print("%d failures" % failures)
        return 1
    return code


if __name__ == "__main__":
    sys.exit(main())
