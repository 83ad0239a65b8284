"""Disk and process faults of the batch tool: the previous output survives byte
for byte, no temporary file is left behind (SIGKILL excepted, as documented in
bindings-c/tableio/atomic_output.hpp), the message names the cause, and the exit
code is the documented one (cli_common.hpp: 3 for an unreadable or unwritable
file; a signal ends the process with that signal)."""
import glob
import os
import resource
import signal
import subprocess
import sys
import time

from e2e_util import BIN, EXAMPLES, run, scratch, write

tmp = scratch()
faults = 0


def check(cond, what):
    if not cond:
        print("FAIL:", what)
        sys.exit(1)


def leftovers(folder):
    return glob.glob(os.path.join(folder, ".*.tmp-*"))


def previous(path, text):
    write(path, text)
    return text


def intact(path, text, what):
    with open(path) as f:
        check(f.read() == text, what + ": the previous output changed")
    check(leftovers(os.path.dirname(path)) == [], what + ": a temporary file was left: %s" % leftovers(os.path.dirname(path)))


# A model and a large input (invented rows, 3 columns) so that writing takes a while.
model = os.path.join(tmp, "model.json")
run("fit", os.path.join(EXAMPLES, "moulding_reference.csv"), "--columns", "melt_temp_C", "cooling_water_C",
    "cap_mass_g", "-o", model, check_code=0)
big = os.path.join(tmp, "big.csv")
with open(big, "w") as f:
    f.write("melt_temp_C,cooling_water_C,cap_mass_g\n")
    for i in range(200000):
        f.write("%.2f,%.2f,%.4f\n" % (233 + (i % 17) * 0.1, 13 + (i % 7) * 0.1, 2.84 + (i % 11) * 0.001))
small = write(os.path.join(tmp, "small.csv"), "melt_temp_C,cooling_water_C,cap_mass_g\n" +
              "".join("%.2f,13.5,2.85\n" % (230 + i) for i in range(200)))

# 1. A full filesystem: the file-size limit (RLIMIT_FSIZE) stops the writes with EFBIG.
out_dir = os.path.join(tmp, "out")
os.mkdir(out_dir)
target = os.path.join(out_dir, "scores.csv")
old = previous(target, "the previous scores\n")


def limit_file_size():
    signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # write() then fails with EFBIG
    resource.setrlimit(resource.RLIMIT_FSIZE, (4096, 4096))


p = subprocess.run([BIN, "score", model, small, "-o", target], capture_output=True, text=True,
                   preexec_fn=limit_file_size, timeout=120)
faults += 1
check(p.returncode == 3, "full filesystem: exit %d, expected 3; %s" % (p.returncode, p.stderr))
# The cause and the file are named ("cannot write '<path>': File too large").
check("File too large" in p.stderr, "full filesystem: the message does not name the cause: " + p.stderr)
check(os.path.basename(target) in p.stderr, "full filesystem: the message does not name the file: " + p.stderr)
intact(target, old, "full filesystem")

# 2. A folder that cannot hold the output: it does not exist, or its "folder" is a file.
for bad, cause in ((os.path.join(tmp, "no-such-folder", "s.csv"), "No such file or directory"),
                   (os.path.join(small, "s.csv"), "Not a directory")):
    code, out, err = run("score", model, small, "-o", bad)
    faults += 1
    check(code == 3, "unwritable folder %s: exit %d" % (bad, code))
    check(cause in err and os.path.basename(bad) in err, "unwritable folder: message: " + err)
intact(target, old, "unwritable folder")

# 3. A vanished input: the data file is gone (and an input that is a folder).
for missing in (os.path.join(tmp, "gone.csv"), out_dir):
    code, out, err = run("score", model, missing, "-o", target)
    faults += 1
    check(code == 3, "vanished input: exit %d" % code)
    check(os.path.basename(missing) in err, "vanished input: message does not name the file: " + err)
    intact(target, old, "vanished input")
code, out, err = run("score", os.path.join(tmp, "gone-model.json"), small, "-o", target)
faults += 1
check(code == 3 and "gone-model.json" in err, "vanished model: exit %d, %s" % (code, err))
intact(target, old, "vanished model")


# 4. SIGTERM and SIGKILL while the output is being written.
def interrupted(sig):
    proc = subprocess.Popen([BIN, "score", model, big, "-o", target], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    deadline = time.time() + 60
    while not leftovers(out_dir) and proc.poll() is None and time.time() < deadline:
        time.sleep(0.002)
    seen = bool(leftovers(out_dir))
    proc.send_signal(sig)
    proc.communicate(timeout=60)
    return proc.returncode, seen


code, seen = interrupted(signal.SIGTERM)
faults += 1
check(seen, "SIGTERM: the run ended before its temporary file appeared")
check(code == -signal.SIGTERM, "SIGTERM: the process did not end by the signal (%d)" % code)
intact(target, old, "SIGTERM")

code, seen = interrupted(signal.SIGKILL)
faults += 1
check(seen and code == -signal.SIGKILL, "SIGKILL: %d" % code)
with open(target) as f:
    check(f.read() == old, "SIGKILL: the previous output changed")
# SIGKILL cannot be caught: the documented leftover pattern, removed by hand.
for left in leftovers(out_dir):
    check(os.path.basename(left).startswith(".scores.csv.tmp-"), "SIGKILL: unexpected leftover " + left)
    os.remove(left)

# 5. A reader on a pipe that closes early: the tool ends (SIGPIPE, or exit 3 with
# a message when the signal is ignored) and leaves nothing behind.
proc = subprocess.Popen([BIN, "score", model, big], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
proc.stdout.read(100)
proc.stdout.close()
err = proc.stderr.read().decode()
proc.wait(timeout=60)
faults += 1
check(proc.returncode == -signal.SIGPIPE, "closed pipe: exit %d, %s" % (proc.returncode, err))


def ignore_sigpipe():
    signal.signal(signal.SIGPIPE, signal.SIG_IGN)


proc = subprocess.Popen([BIN, "score", model, big], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                        preexec_fn=ignore_sigpipe)
proc.stdout.read(100)
proc.stdout.close()
err = proc.stderr.read().decode()
proc.wait(timeout=60)
faults += 1
check(proc.returncode == 3 and "Broken pipe" in err, "closed pipe, SIGPIPE ignored: exit %d, %s" % (proc.returncode, err))
intact(target, old, "closed pipe")

print("faults injected: %d; previous output intact after each" % faults)
