#!/usr/bin/env python3
"""The Python binding installed by pip, used with the installed library
(tests/install/CMakeLists.txt, test install.python_package).

Needs the prefix that install.into_prefix fills (fixture ellipsa_installed).
Steps:
  1. pip installs bindings-c/python (its pyproject.toml) offline into a scratch
     folder, from a copy of the source folder so that setuptools' build/ and
     *.egg-info stay out of the source tree;
  2. the installed files: the package, and dist-info metadata with the
     project's version;
  3. tests/bindings/test_python_smoke.py runs with only that folder on
     PYTHONPATH and the prefix's lib folder on LD_LIBRARY_PATH (the loader
     rule, bindings-c/python/README.md): the package and the library it loads
     must be the installed ones, not the source or the build tree;
  4. ELLIPSA_LIBRARY naming the installed file is honoured too;
  5. with neither, the import fails with a message naming both ways, instead
     of reaching into some build folder (skipped if the system's loader
     already knows a libellipsa, e.g. after `make install` into /usr/local).

Python standard library only (pip and setuptools from Debian's python3-pip,
python3-setuptools). Environment as test_installed.py, plus ELLIPSA_PYTHON
(the interpreter that has pip).
"""
import os
import shutil
import subprocess
import sys

ENV = os.environ
SOURCE = ENV["ELLIPSA_SOURCE_DIR"]
VERSION = ENV["ELLIPSA_VERSION"]
MAJOR = VERSION.split(".")[0]
LIBDIR = ENV["ELLIPSA_INSTALL_LIBDIR"]
WORK = ENV["ELLIPSA_INSTALL_WORK"]
PYTHON = ENV["ELLIPSA_PYTHON"]
PREFIX = os.path.join(WORK, "prefix")  # filled by install.into_prefix
PACKAGE_SOURCE = os.path.join(SOURCE, "bindings-c", "python")
SMOKE = os.path.join(SOURCE, "tests", "bindings", "test_python_smoke.py")

# What the child prints: where the package and the library come from.
WHERE = ("import ellipsa; print(ellipsa.__file__); print(ellipsa.library_path()); "
         "print(ellipsa.__version__); print(ellipsa.version())")


def run(args, env, cwd):
    p = subprocess.run(args, env=env, cwd=cwd, stdout=subprocess.PIPE,
                       stderr=subprocess.STDOUT, universal_newlines=True)
    return p.returncode, p.stdout


def must(args, env, cwd):
    code, out = run(args, env, cwd)
    if code != 0:
        sys.exit("FAIL: %s exited %d:\n%s" % (" ".join(args), code, out))
    return out


def user_env(**extra):
    """A user's shell: nothing pointing into the source or build tree."""
    env = dict(ENV)
    for name in ("LD_LIBRARY_PATH", "PYTHONPATH", "ELLIPSA_LIBRARY", "ELLIPSA_CROSS_DIR",
                 "PYTHONHOME", "PYTHONSTARTUP"):
        env.pop(name, None)
    env["PYTHONDONTWRITEBYTECODE"] = "1"
    env.update(extra)
    return env


def inside(path, folder):
    return os.path.realpath(path).startswith(os.path.realpath(folder) + os.sep)


def pip_install(site):
    copy = os.path.join(WORK, "python-source")
    for folder in (copy, site):
        if os.path.exists(folder):
            shutil.rmtree(folder)
    shutil.copytree(PACKAGE_SOURCE, copy, ignore=shutil.ignore_patterns("__pycache__", "build", "*.egg-info"))
    env = user_env(PIP_NO_INPUT="1", PIP_DISABLE_PIP_VERSION_CHECK="1", PIP_ROOT_USER_ACTION="ignore")
    must([PYTHON, "-m", "pip", "install", "--quiet", "--no-build-isolation", "--no-index", "--no-deps",
          "--no-cache-dir", "--target", site, copy], env, WORK)
    problems = []
    if not os.path.isfile(os.path.join(site, "ellipsa", "__init__.py")):
        problems.append("no ellipsa/__init__.py in %s" % site)
    metadata = os.path.join(site, "ellipsa-%s.dist-info" % VERSION, "METADATA")
    if not os.path.isfile(metadata):
        problems.append("no %s (package version differs from the project's %s?): %s"
                        % (metadata, VERSION, sorted(os.listdir(site))))
    else:
        with open(metadata) as f:
            if "\nVersion: %s\n" % VERSION not in f.read():
                problems.append("%s does not say Version: %s" % (metadata, VERSION))
    if problems:
        sys.exit("FAIL: pip's install is incomplete:\n  " + "\n  ".join(problems))
    print("pip installed bindings-c/python %s into %s" % (VERSION, site))


def check_where(out, site, library_file, how):
    lines = out.strip().splitlines()[-4:]
    if len(lines) != 4:
        sys.exit("FAIL (%s): unexpected output:\n%s" % (how, out))
    package, library, binding_version, library_version = lines
    bad = []
    if not inside(package, site):
        bad.append("package imported from %s, not from %s" % (package, site))
    if os.path.realpath(library) != os.path.realpath(library_file):
        bad.append("library loaded from %s, not %s" % (library, library_file))
    if binding_version != VERSION or library_version != VERSION:
        bad.append("versions %s (binding), %s (library), expected %s" % (binding_version, library_version, VERSION))
    if bad:
        sys.exit("FAIL (%s):\n  %s" % (how, "\n  ".join(bad)))
    print("%s: package %s, library %s" % (how, package, library))


def main():
    site = os.path.join(WORK, "python-site")
    pip_install(site)
    lib_folder = os.path.join(PREFIX, LIBDIR)
    library_file = os.path.join(lib_folder, "libellipsa.so." + VERSION)
    if not os.path.isfile(library_file):
        sys.exit("FAIL: %s missing: install.into_prefix must run first" % library_file)
    # A folder outside both trees, so that nothing is imported from the cwd.
    cwd = os.path.join(WORK, "python-cwd")
    os.makedirs(cwd, exist_ok=True)

    # Rule 3: the system's loader, here through LD_LIBRARY_PATH.
    env = user_env(PYTHONPATH=site, LD_LIBRARY_PATH=lib_folder, OPENBLAS_NUM_THREADS="1")
    check_where(must([PYTHON, "-c", WHERE], env, cwd), site, library_file, "LD_LIBRARY_PATH")
    out = must([PYTHON, SMOKE], env, cwd)
    print(out.strip().splitlines()[-1] if out.strip() else "")
    print("installed package: tests/bindings/test_python_smoke.py passes")

    # Rule 1: ELLIPSA_LIBRARY, the full path of the installed file.
    env = user_env(PYTHONPATH=site, ELLIPSA_LIBRARY=os.path.join(lib_folder, "libellipsa.so." + MAJOR))
    check_where(must([PYTHON, "-c", WHERE], env, cwd), site, library_file, "ELLIPSA_LIBRARY")

    # Neither: a clear ImportError, not a library from a build folder.
    code, listing = run(["/sbin/ldconfig", "-p"], user_env(), cwd)
    if code == 0 and ("libellipsa.so.%s " % MAJOR) in listing:
        print("skipped the no-library check: the system's loader knows a libellipsa.so.%s" % MAJOR)
        return
    code, out = run([PYTHON, "-c", "import ellipsa"], user_env(PYTHONPATH=site), cwd)
    if code == 0:
        sys.exit("FAIL: `import ellipsa` succeeded with no library on any path:\n%s" % out)
    for word in ("ImportError", "ELLIPSA_LIBRARY", "LD_LIBRARY_PATH", "libellipsa.so." + MAJOR):
        if word not in out:
            sys.exit("FAIL: the failed import does not mention %s:\n%s" % (word, out))
    print("no library on any path: ImportError naming ELLIPSA_LIBRARY and LD_LIBRARY_PATH")


if __name__ == "__main__":
    main()
