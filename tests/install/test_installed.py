#!/usr/bin/env python3
"""ellipsa as installed: `cmake --install` into a temporary prefix, then used
from there the way a user's project would (tests/install/CMakeLists.txt).

    test_installed.py install         install into the prefix; check its layout
    test_installed.py find-package    build and run two C programs with find_package(ellipsa)
    test_installed.py pkg-config      the same with the compiler flags of ellipsa.pc
    test_installed.py destdir         a staged install (DESTDIR) keeps DESTDIR out of the files
    test_installed.py detects-broken  the layout check fails on broken copies

Python standard library only. The environment names the build (ELLIPSA_BUILD_DIR,
ELLIPSA_SOURCE_DIR, ELLIPSA_VERSION, ELLIPSA_INSTALL_{BIN,LIB,INCLUDE}DIR), the
tools (ELLIPSA_CMAKE, ELLIPSA_CC, ELLIPSA_PKG_CONFIG, ELLIPSA_READELF, ELLIPSA_LDD)
and the scratch folder (ELLIPSA_INSTALL_WORK).
"""
import json
import os
import shutil
import subprocess
import sys
from fractions import Fraction

ENV = os.environ
BUILD = ENV["ELLIPSA_BUILD_DIR"]
SOURCE = ENV["ELLIPSA_SOURCE_DIR"]
VERSION = ENV["ELLIPSA_VERSION"]
MAJOR = VERSION.split(".")[0]
BINDIR = ENV["ELLIPSA_INSTALL_BINDIR"]
LIBDIR = ENV["ELLIPSA_INSTALL_LIBDIR"]
INCLUDEDIR = ENV["ELLIPSA_INSTALL_INCLUDEDIR"]
WORK = ENV["ELLIPSA_INSTALL_WORK"]
PREFIX = os.path.join(WORK, "prefix")  # shared by the tests of the fixture

SWEAT_SOURCE = os.path.join(SOURCE, "tests", "install", "sweat_covariance.c")
EXAMPLE_SOURCE = os.path.join(SOURCE, "examples", "c", "profile_and_score.c")
SWEAT_DATA = os.path.join(SOURCE, "tests", "reference", "hotelling", "sweat_johnson_wichern.csv")
SWEAT_REFERENCE = os.path.join(SOURCE, "tests", "reference", "hotelling", "one_sample_T2_sweat.json")


def run(args, env=None, cwd=None):
    """Runs a command; returns (exit status, stdout + stderr)."""
    p = subprocess.run(args, env=env, cwd=cwd, stdout=subprocess.PIPE,
                       stderr=subprocess.STDOUT, text=True)
    return p.returncode, p.stdout


def must(args, env=None, cwd=None):
    code, out = run(args, env, cwd)
    if code != 0:
        sys.exit("FAIL: %s exited %d:\n%s" % (" ".join(args), code, out))
    return out


def clean_env():
    """The environment of a user's shell: no library path into the build tree."""
    env = dict(ENV)
    for name in ("LD_LIBRARY_PATH", "PKG_CONFIG_PATH", "CMAKE_PREFIX_PATH"):
        env.pop(name, None)
    return env


def install(prefix, destdir=None):
    if os.path.lexists(prefix):
        shutil.rmtree(prefix)
    env = clean_env()
    if destdir is not None:
        env["DESTDIR"] = destdir
    must([ENV["ELLIPSA_CMAKE"], "--install", BUILD, "--prefix", prefix], env=env)


def pkg_config(prefix, *args):
    """pkg-config reading only the prefix's own folder of .pc files."""
    env = clean_env()
    env["PKG_CONFIG_LIBDIR"] = os.path.join(prefix, LIBDIR, "pkgconfig")
    code, out = run([ENV["ELLIPSA_PKG_CONFIG"]] + list(args) + ["ellipsa"], env=env)
    return code, out.strip()


def dynamic_section(path):
    """(SONAME, [RUNPATH/RPATH entries]) read with readelf."""
    code, out = run([ENV["ELLIPSA_READELF"], "-d", path])
    if code != 0:
        return None, []
    soname, paths = None, []
    for line in out.splitlines():
        if "(SONAME)" in line:
            soname = line.split("[", 1)[1].rsplit("]", 1)[0]
        elif "(RUNPATH)" in line or "(RPATH)" in line:
            paths += line.split("[", 1)[1].rsplit("]", 1)[0].split(":")
    return soname, paths


def resolved_library(program, name):
    """The file the dynamic loader picks for `name` when `program` runs (ldd)."""
    code, out = run([ENV["ELLIPSA_LDD"], program], env=clean_env())
    for line in out.splitlines():
        parts = line.split()
        if parts and parts[0] == name and "=>" in parts:
            target = parts[parts.index("=>") + 1]
            return None if target == "not" else os.path.realpath(target)
    return None


def inside(path, folder):
    return path is not None and os.path.realpath(path).startswith(os.path.realpath(folder) + os.sep)


def check_install(prefix):
    """Problems of an installed prefix, as sentences; empty when it is sound."""
    problems = []
    lib = os.path.join(prefix, LIBDIR)
    include = os.path.join(prefix, INCLUDEDIR)

    # Header: the public contract, byte for byte.
    header = os.path.join(include, "ellipsa.h")
    with open(os.path.join(SOURCE, "capi", "include", "ellipsa.h"), "rb") as f:
        source_header = f.read()
    if not os.path.isfile(header):
        problems.append("header: %s is missing" % header)
    else:
        with open(header, "rb") as f:
            if f.read() != source_header:
                problems.append("header: %s differs from capi/include/ellipsa.h" % header)

    # Library: real file, soname link, development link; the soname carries the
    # ABI major (docs/versioning.md).
    real = os.path.join(lib, "libellipsa.so." + VERSION)
    soname_link = os.path.join(lib, "libellipsa.so." + MAJOR)
    dev_link = os.path.join(lib, "libellipsa.so")
    if not os.path.isfile(real) or os.path.islink(real):
        problems.append("library: %s is missing or not a file" % real)
    else:
        soname, _ = dynamic_section(real)
        if soname != "libellipsa.so." + MAJOR:
            problems.append("library: soname %r, expected libellipsa.so.%s" % (soname, MAJOR))
    for link in (soname_link, dev_link):
        if not os.path.islink(link) or os.path.realpath(link) != os.path.realpath(real):
            problems.append("library: %s is not a link to %s" % (link, os.path.basename(real)))

    # CMake package: the three files, the version, and the paths the imported
    # target points at.
    package = os.path.join(lib, "cmake", "ellipsa")
    for name in ("ellipsaConfig.cmake", "ellipsaConfigVersion.cmake", "ellipsaTargets.cmake"):
        if not os.path.isfile(os.path.join(package, name)):
            problems.append("cmake package: %s is missing" % os.path.join(package, name))
    version_file = os.path.join(package, "ellipsaConfigVersion.cmake")
    if os.path.isfile(version_file):
        with open(version_file) as f:
            if 'set(PACKAGE_VERSION "%s")' % VERSION not in f.read():
                problems.append("cmake package: %s does not say version %s" % (version_file, VERSION))
    targets = [n for n in os.listdir(package)] if os.path.isdir(package) else []
    # ellipsaTargets-<config>.cmake: IMPORTED_LOCATION_<CONFIG> "${_IMPORT_PREFIX}/..."
    locations = []
    for name in targets:
        if name.startswith("ellipsaTargets") and name.endswith(".cmake"):
            with open(os.path.join(package, name)) as f:
                for line in f:
                    for key in ("IMPORTED_LOCATION", "INTERFACE_INCLUDE_DIRECTORIES"):
                        if line.strip().startswith(key) and "${_IMPORT_PREFIX}" in line:
                            value = line.split('"')[1].replace("${_IMPORT_PREFIX}", prefix)
                            locations.append((key, value))
    if not any(k == "IMPORTED_LOCATION" for k, _ in locations):
        problems.append("cmake package: no imported location of ellipsa::ellipsa")
    for key, value in locations:
        if not os.path.exists(value):
            problems.append("cmake package: %s points at %s, which does not exist" % (key, value))

    # pkg-config: the file must point at this prefix and at the files in it.
    code, version = pkg_config(prefix, "--modversion")
    if code != 0:
        problems.append("pkg-config: ellipsa.pc not usable from %s: %s" % (prefix, version))
    else:
        if version != VERSION:
            problems.append("pkg-config: version %s, expected %s" % (version, VERSION))
        _, pc_prefix = pkg_config(prefix, "--variable=prefix")
        if os.path.realpath(pc_prefix) != os.path.realpath(prefix):
            problems.append("pkg-config: prefix %s, installed at %s" % (pc_prefix, prefix))
        _, pc_libdir = pkg_config(prefix, "--variable=libdir")
        _, pc_includedir = pkg_config(prefix, "--variable=includedir")
        if not os.path.isfile(os.path.join(pc_libdir, "libellipsa.so")):
            problems.append("pkg-config: libdir %s holds no libellipsa.so" % pc_libdir)
        if not os.path.isfile(os.path.join(pc_includedir, "ellipsa.h")):
            problems.append("pkg-config: includedir %s holds no ellipsa.h" % pc_includedir)
        _, libs = pkg_config(prefix, "--libs")
        if "-L" + pc_libdir not in libs.split() or "-lellipsa" not in libs.split():
            problems.append("pkg-config: --libs gives %r" % libs)
        _, cflags = pkg_config(prefix, "--cflags")
        if "-I" + pc_includedir not in cflags.split():
            problems.append("pkg-config: --cflags gives %r" % cflags)

    # Batch tool: finds the library relative to itself and runs from the prefix.
    tool = os.path.join(prefix, BINDIR, "ellipsa")
    if not os.path.isfile(tool):
        problems.append("tool: %s is missing" % tool)
    else:
        _, runpath = dynamic_section(tool)
        if not runpath or any(not p.startswith("$ORIGIN") for p in runpath):
            problems.append("tool: run path %r is not relative to the tool ($ORIGIN)" % runpath)
        loaded = resolved_library(tool, "libellipsa.so." + MAJOR)
        if not inside(loaded, prefix):
            problems.append("tool: loads libellipsa.so.%s from %s, not from the prefix" % (MAJOR, loaded))
        code, out = run([tool, "--version"], env=clean_env())
        if code != 0 or out.strip() != "ellipsa " + VERSION:
            problems.append("tool: `ellipsa --version` exited %d with %r" % (code, out.strip()))
    return problems


def check_sweat_output(out, how):
    """The covariance of the sweat data as printed by sweat_covariance.c."""
    with open(SWEAT_REFERENCE) as f:
        ref = json.load(f)
    # Johnson & Wichern, Applied Multivariate Statistical Analysis, Example 5.2:
    # S recomputed exactly in rational arithmetic from the printed data
    # (computed_exact.S_exact, divisor n-1), and xbar as printed (exact decimals).
    exact = [[Fraction(v) for v in row] for row in ref["computed_exact"]["S_exact"]]
    published_mean = [Fraction(v) for v in ref["published"]["xbar"]]
    published_s = [[Fraction(v) for v in row] for row in ref["published"]["S"]]
    got_mean, got_cov, rows, version_line = {}, {}, None, None
    for line in out.splitlines():
        parts = line.split()
        if parts[:1] == ["version"]:
            version_line = parts[1:]
        elif parts[:1] == ["rows"]:
            rows = int(parts[1])
        elif parts[:1] == ["mean"]:
            got_mean[int(parts[1])] = Fraction(parts[2])
        elif parts[:1] == ["cov"]:
            got_cov[(int(parts[1]), int(parts[2]))] = Fraction(parts[3])
    bad = []
    # The loaded library is the installed one of this build, and the header agrees.
    if version_line != [VERSION, "1"]:
        bad.append("version line %r, expected %s and a matching header" % (version_line, VERSION))
    if rows != 20:  # Johnson & Wichern, Example 5.2: 20 women
        bad.append("rows used %r, expected 20" % rows)
    for j in range(3):
        # xbar = (4.640, 45.400, 9.965), printed exactly: relative 1e-14 allows
        # the rounding of a sum of 20 doubles.
        if j not in got_mean or abs(got_mean[j] - published_mean[j]) > Fraction(1, 10**14) * abs(published_mean[j]):
            bad.append("mean %d = %s, expected %s" % (j, got_mean.get(j), published_mean[j]))
        for i in range(3):
            g = got_cov.get((i, j))
            # Exact S to 1e-12 relative (a two-pass covariance of 20 rows in
            # double precision is good to about 1e-15 here).
            if g is None or abs(g - exact[i][j]) > Fraction(1, 10**12) * abs(exact[i][j]):
                bad.append("cov[%d][%d] = %s, exact %s" % (i, j, g and float(g), float(exact[i][j])))
            # The book prints S to three decimals, -1.810 for -1.80905 (hence 1e-3).
            if g is not None and abs(g - published_s[i][j]) > Fraction(1, 1000):
                bad.append("cov[%d][%d] = %s, printed %s" % (i, j, float(g), ref["published"]["S"][i][j]))
    if bad:
        sys.exit("FAIL (%s): sweat_covariance output wrong:\n  %s\noutput:\n%s" % (how, "\n  ".join(bad), out))
    print("%s: sweat data mean and covariance match Johnson & Wichern Example 5.2" % how)


def run_programs(folder, how):
    """Runs the two programs built against the prefix, from a clean environment."""
    sweat = os.path.join(folder, "sweat_covariance")
    example = os.path.join(folder, "profile_and_score")
    for program in (sweat, example):
        loaded = resolved_library(program, "libellipsa.so." + MAJOR)
        if not inside(loaded, PREFIX):
            sys.exit("FAIL (%s): %s loads libellipsa from %s, not from %s" % (how, program, loaded, PREFIX))
    check_sweat_output(must([sweat, SWEAT_DATA], env=clean_env()), how)
    # examples/c/profile_and_score.c exits 0 only when both planted faults are flagged.
    print(must([example], env=clean_env()), end="")
    print("%s: examples/c/profile_and_score.c flags both planted faults" % how)


def test_install():
    install(PREFIX)
    problems = check_install(PREFIX)
    if problems:
        sys.exit("FAIL: the installed prefix %s is broken:\n  %s" % (PREFIX, "\n  ".join(problems)))
    print("installed into %s: header, library (soname libellipsa.so.%s), tool, CMake package, pkg-config"
          % (PREFIX, MAJOR))


def test_find_package():
    source = os.path.join(SOURCE, "tests", "install", "consumer")
    build = os.path.join(WORK, "consumer-find-package")
    if os.path.exists(build):
        shutil.rmtree(build)
    out = must([ENV["ELLIPSA_CMAKE"], "-S", source, "-B", build,
                "-DCMAKE_PREFIX_PATH=" + PREFIX, "-DCMAKE_C_COMPILER=" + ENV["ELLIPSA_CC"],
                "-DCMAKE_FIND_USE_PACKAGE_REGISTRY=OFF", "-DCMAKE_BUILD_TYPE=Release",
                "-DSWEAT_SOURCE=" + SWEAT_SOURCE, "-DEXAMPLE_SOURCE=" + EXAMPLE_SOURCE],
               env=clean_env())
    expected = "ellipsa %s from %s" % (VERSION, os.path.join(PREFIX, LIBDIR, "cmake", "ellipsa"))
    if expected not in out:
        sys.exit("FAIL: find_package did not report %r:\n%s" % (expected, out))
    must([ENV["ELLIPSA_CMAKE"], "--build", build], env=clean_env())
    run_programs(build, "find_package")


def compile_with_pkg_config(prefix, out_dir):
    """Compiles both programs with the flags of the prefix's ellipsa.pc; returns
    (exit status, output) of the first failure or of the last compile."""
    code, cflags = pkg_config(prefix, "--cflags")
    if code != 0:
        return code, cflags
    code, libs = pkg_config(prefix, "--libs")
    if code != 0:
        return code, libs
    _, libdir = pkg_config(prefix, "--variable=libdir")
    os.makedirs(out_dir, exist_ok=True)
    for name, source in (("sweat_covariance", SWEAT_SOURCE), ("profile_and_score", EXAMPLE_SOURCE)):
        # -Wl,-rpath: the usual way to run against a library outside the
        # loader's search path without LD_LIBRARY_PATH.
        code, out = run([ENV["ELLIPSA_CC"], "-std=c99", "-Wall", "-Wextra", "-pedantic", "-Werror"]
                        + cflags.split() + [source, "-o", os.path.join(out_dir, name)]
                        + libs.split() + ["-Wl,-rpath," + libdir], env=clean_env())
        if code != 0:
            return code, out
    return 0, ""


def test_pkg_config():
    out_dir = os.path.join(WORK, "consumer-pkg-config")
    if os.path.exists(out_dir):
        shutil.rmtree(out_dir)
    code, out = compile_with_pkg_config(PREFIX, out_dir)
    if code != 0:
        sys.exit("FAIL: compiling with the flags of ellipsa.pc:\n%s" % out)
    run_programs(out_dir, "pkg-config")


def test_destdir():
    # A packager's staged install: files under DESTDIR/PREFIX, and no trace of
    # DESTDIR inside the pkg-config file or the CMake package.
    stage = os.path.join(WORK, "stage")
    final = os.path.join(WORK, "final-prefix")
    if os.path.exists(stage):
        shutil.rmtree(stage)
    install(final, destdir=stage)
    staged = stage + final
    if os.path.exists(final):
        sys.exit("FAIL: DESTDIR ignored, files written to %s" % final)
    pc = os.path.join(staged, LIBDIR, "pkgconfig", "ellipsa.pc")
    with open(pc) as f:
        text = f.read()
    if "prefix=%s\n" % final not in text or stage in text:
        sys.exit("FAIL: staged %s does not name the final prefix %s:\n%s" % (pc, final, text))
    for root, _, files in os.walk(os.path.join(staged, LIBDIR, "cmake")):
        for name in files:
            with open(os.path.join(root, name)) as f:
                if stage in f.read():
                    sys.exit("FAIL: %s mentions the staging folder %s" % (name, stage))
    # Moved to its final place, the staged tree is a sound install.
    os.rename(staged, final)
    try:
        problems = check_install(final)
    finally:
        shutil.rmtree(final)
        shutil.rmtree(stage)
    if problems:
        sys.exit("FAIL: the staged install, moved to %s, is broken:\n  %s" % (final, "\n  ".join(problems)))
    print("DESTDIR=%s: files staged under it, pkg-config and CMake package name %s" % (stage, final))


def replace_text(path, old, new):
    with open(path) as f:
        text = f.read()
    if old not in text:
        sys.exit("FAIL: cannot break %s: %r not found" % (path, old))
    with open(path, "w") as f:
        f.write(text.replace(old, new))


def test_detects_broken():
    # A prefix of its own, so that breaking it disturbs no other test.
    prefix = os.path.join(WORK, "broken-prefix")
    install(prefix)
    problems = check_install(prefix)
    if problems:
        sys.exit("FAIL: the intact copy already fails:\n  %s" % "\n  ".join(problems))
    lib = os.path.join(prefix, LIBDIR)
    header = os.path.join(prefix, INCLUDEDIR, "ellipsa.h")
    pc = os.path.join(lib, "pkgconfig", "ellipsa.pc")
    version_file = os.path.join(lib, "cmake", "ellipsa", "ellipsaConfigVersion.cmake")
    soname_link = os.path.join(lib, "libellipsa.so." + MAJOR)
    package = os.path.join(lib, "cmake", "ellipsa")
    # ellipsaTargets-<build type>.cmake: where ellipsa::ellipsa's file is.
    per_config = [os.path.join(package, n) for n in os.listdir(package)
                  if n.startswith("ellipsaTargets-") and n.endswith(".cmake")]
    if len(per_config) != 1:
        sys.exit("FAIL: expected one ellipsaTargets-<config>.cmake in %s" % package)
    moved = prefix + "-moved"

    def hide(path):
        os.rename(path, path + ".hidden")
        return lambda: os.rename(path + ".hidden", path)

    def edit(path, old, new):
        with open(path) as f:
            saved = f.read()
        replace_text(path, old, new)

        def restore():
            with open(path, "w") as f:
                f.write(saved)
        return restore

    def move():
        os.rename(prefix, moved)
        return lambda: os.rename(moved, prefix)

    # (what is broken, how, where the check must look, a word its report must contain)
    cases = [
        ("header missing", lambda: hide(header), prefix, "header:"),
        ("header edited", lambda: edit(header, "#define ELLIPSA_VERSION_MAJOR", "#define ELLIPSA_VERSION_MAJOR_X"),
         prefix, "header:"),
        ("soname link missing", lambda: hide(soname_link), prefix, "library:"),
        ("pc libdir wrong", lambda: edit(pc, "libdir=${prefix}/", "libdir=${prefix}/nowhere/"), prefix, "libdir"),
        ("pc includedir wrong", lambda: edit(pc, "includedir=${prefix}/", "includedir=${prefix}/nowhere/"),
         prefix, "includedir"),
        ("pc version wrong", lambda: edit(pc, "Version: " + VERSION, "Version: 9" + VERSION), prefix, "version"),
        ("pc file missing", lambda: hide(pc), prefix, "pkg-config:"),
        ("cmake version file missing", lambda: hide(version_file), prefix, "cmake package:"),
        ("cmake imported location wrong",
         lambda: edit(per_config[0], "/libellipsa.so.", "/libellipsa-gone.so."), prefix, "IMPORTED_LOCATION"),
        # A moved prefix: pkg-config's prefix is stale (the tool itself, with a
        # relative run path, must still run: no "tool:" problem may appear).
        ("prefix moved", move, moved, "pkg-config: prefix"),
    ]
    failures = []
    for what, breaker, where, word in cases:
        restore = breaker()
        try:
            found = check_install(where)
        finally:
            restore()
        if not any(word in p for p in found):
            failures.append("%s: not detected (report: %r)" % (what, found))
        elif what == "prefix moved" and any(p.startswith("tool:") for p in found):
            failures.append("prefix moved: the tool no longer runs: %r" % found)
        else:
            print("detected %s: %s" % (what, "; ".join(found)))

    # A user's compile fails too: with the header gone, the pkg-config build breaks.
    restore = hide(header)
    try:
        code, _ = compile_with_pkg_config(prefix, os.path.join(WORK, "broken-compile"))
    finally:
        restore()
        shutil.rmtree(os.path.join(WORK, "broken-compile"), ignore_errors=True)
    if code == 0:
        failures.append("header missing: compiling with ellipsa.pc still succeeded")
    else:
        print("detected header missing: compiling with ellipsa.pc fails")

    if check_install(prefix):
        failures.append("the restored copy is not sound again: %r" % check_install(prefix))
    shutil.rmtree(prefix)
    if failures:
        sys.exit("FAIL:\n  " + "\n  ".join(failures))


if __name__ == "__main__":
    tests = {"install": test_install, "find-package": test_find_package, "pkg-config": test_pkg_config,
             "destdir": test_destdir, "detects-broken": test_detects_broken}
    if len(sys.argv) != 2 or sys.argv[1] not in tests:
        sys.exit("usage: test_installed.py {%s}" % ",".join(tests))
    tests[sys.argv[1]]()
