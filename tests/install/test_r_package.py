#!/usr/bin/env python3
"""The R binding installed as a package, against the installed library
(tests/install/CMakeLists.txt).

    test_r_package.py install   R CMD INSTALL into a scratch R library, the glue
                                linked to the prefix's libellipsa through
                                pkg-config (bindings-c/r/configure); then
                                tests/bindings/test_r_smoke.R runs on the
                                installed package
    test_r_package.py check     R CMD build, then R CMD check --no-manual on the
                                tarball: no ERROR, no WARNING, and no NOTE but
                                those explained in bindings-c/r/README.md
                                (ALLOWED_NOTES)

Both need the prefix that install.into_prefix fills (fixture
ellipsa_installed). Each works on its own copy of bindings-c/r, since
R CMD INSTALL and check write into the package folder. Python standard library
only; environment as test_installed.py, plus ELLIPSA_R (the R front end).
"""
import os
import re
import shutil
import subprocess
import sys

ENV = os.environ
SOURCE = ENV["ELLIPSA_SOURCE_DIR"]
LIBDIR = ENV["ELLIPSA_INSTALL_LIBDIR"]
WORK = ENV["ELLIPSA_INSTALL_WORK"]
R = ENV["ELLIPSA_R"]
VERSION = ENV["ELLIPSA_VERSION"]
MAJOR = VERSION.split(".")[0]
PREFIX = os.path.join(WORK, "prefix")  # filled by install.into_prefix
PACKAGE_SOURCE = os.path.join(SOURCE, "bindings-c", "r")
SMOKE = os.path.join(SOURCE, "tests", "bindings", "test_r_smoke.R")

# Notes R CMD check may give, by the check's name (e.g. "checking installed
# package size"), each explained in bindings-c/r/README.md ("R CMD check").
# Any other NOTE fails the test. None today.
ALLOWED_NOTES = set()


def run(args, env, cwd):
    p = subprocess.run(args, env=env, cwd=cwd, stdout=subprocess.PIPE,
                       stderr=subprocess.STDOUT, universal_newlines=True)
    return p.returncode, p.stdout


def must(args, env, cwd):
    code, out = run(args, env, cwd)
    if code != 0:
        sys.exit("FAIL: %s exited %d:\n%s" % (" ".join(args), code, out))
    return out


def user_env():
    """A user's shell with the installed prefix known to pkg-config only."""
    env = dict(ENV)
    for name in ("LD_LIBRARY_PATH", "ELLIPSA_INCLUDE_DIR", "ELLIPSA_LIB_DIR", "ELLIPSA_R_DIR",
                 "ELLIPSA_R_SCRATCH", "ELLIPSA_CROSS_DIR", "R_LIBS", "R_LIBS_USER"):
        env.pop(name, None)
    env["PKG_CONFIG_PATH"] = os.path.join(PREFIX, LIBDIR, "pkgconfig")
    env["R_LIBS_USER"] = os.devnull  # no personal library: only base R and ours
    env["OPENBLAS_NUM_THREADS"] = "1"
    return env


def fresh_copy(name):
    copy = os.path.join(WORK, name, "ellipsa")  # R wants the folder named as the package
    if os.path.exists(os.path.dirname(copy)):
        shutil.rmtree(os.path.dirname(copy))
    shutil.copytree(PACKAGE_SOURCE, copy, symlinks=True,
                    ignore=shutil.ignore_patterns("*.o", "*.so", "Makevars"))
    return copy


def test_install():
    if not os.path.isfile(os.path.join(PREFIX, LIBDIR, "pkgconfig", "ellipsa.pc")):
        sys.exit("FAIL: no installed prefix at %s: install.into_prefix must run first" % PREFIX)
    copy = fresh_copy("r-source")
    library = os.path.join(WORK, "r-library")
    if os.path.exists(library):
        shutil.rmtree(library)
    os.makedirs(library)
    env = user_env()
    out = must([R, "CMD", "INSTALL", "--no-docs", "--no-html", "--library=" + library, copy], env, WORK)
    if "configure: libellipsa from %s" % os.path.join(PREFIX, LIBDIR) not in out:
        sys.exit("FAIL: configure did not find the prefix's library through pkg-config:\n%s" % out)
    glue = os.path.join(library, "ellipsa", "libs", "ellipsa.so")
    code, ldd = run(["ldd", glue], env, WORK)
    loaded = None
    for line in ldd.splitlines():
        parts = line.split()
        if parts and parts[0] == "libellipsa.so." + MAJOR and "=>" in parts:
            loaded = os.path.realpath(parts[parts.index("=>") + 1])
    if loaded is None or not loaded.startswith(os.path.realpath(PREFIX) + os.sep):
        sys.exit("FAIL: the installed glue %s loads libellipsa from %s, not from %s:\n%s"
                 % (glue, loaded, PREFIX, ldd))
    print("R CMD INSTALL: glue %s loads %s" % (glue, loaded))
    env["ELLIPSA_R_LIBRARY"] = library
    # From a folder outside the source tree, with nothing of it on any path.
    out = must([os.path.join(os.path.dirname(R), "Rscript"), "--vanilla", SMOKE], env, WORK)
    print(out.strip().splitlines()[-1] if out.strip() else "")
    print("installed package: tests/bindings/test_r_smoke.R passes")


def test_check():
    if not os.path.isfile(os.path.join(PREFIX, LIBDIR, "pkgconfig", "ellipsa.pc")):
        sys.exit("FAIL: no installed prefix at %s: install.into_prefix must run first" % PREFIX)
    copy = fresh_copy("r-check-source")
    out_dir = os.path.join(WORK, "r-check")
    if os.path.exists(out_dir):
        shutil.rmtree(out_dir)
    os.makedirs(out_dir)
    env = user_env()
    env["_R_CHECK_FORCE_SUGGESTS_"] = "false"
    # A check wants the sources as R CMD build prepares them (else it notes so).
    must([R, "CMD", "build", "--no-manual", "--no-build-vignettes", copy], env, out_dir)
    tarball = os.path.join(out_dir, "ellipsa_%s.tar.gz" % VERSION)
    if not os.path.isfile(tarball):
        sys.exit("FAIL: R CMD build made no %s (DESCRIPTION's version differs?): %s"
                 % (tarball, sorted(os.listdir(out_dir))))
    code, out = run([R, "CMD", "check", "--no-manual", "-o", out_dir, tarball], env, out_dir)
    log_path = os.path.join(out_dir, "ellipsa.Rcheck", "00check.log")
    if not os.path.isfile(log_path):
        sys.exit("FAIL: R CMD check exited %d without a log:\n%s" % (code, out))
    with open(log_path, encoding="utf-8", errors="replace") as f:
        log = f.read()
    # Lines "* checking X ... [time] NOTE|WARNING|ERROR".
    findings = re.findall(r"^\* (checking .*?) \.\.\.(?: \[[^\]\n]*\])? (NOTE|WARNING|ERROR)$", log, flags=re.M)
    bad = [(what, level) for what, level in findings if level != "NOTE" or what not in ALLOWED_NOTES]
    status = re.search(r"^Status: (.*)$", log, flags=re.M)
    if code != 0 or bad or status is None or re.search("WARNING|ERROR", status.group(1)):
        sys.exit("FAIL: R CMD check exited %d; not allowed: %r\n%s" % (code, bad, log))
    print("R CMD check --no-manual: %s (allowed notes: %s)"
          % (status.group(1), ", ".join(w for w, _ in findings) or "none"))


if __name__ == "__main__":
    tests = {"install": test_install, "check": test_check}
    if len(sys.argv) != 2 or sys.argv[1] not in tests:
        sys.exit("usage: test_r_package.py {%s}" % ",".join(tests))
    tests[sys.argv[1]]()
