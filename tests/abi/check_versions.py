#!/usr/bin/env python3
"""One version for the project (docs/versioning.md): `project(ellipsa VERSION
X.Y.Z)` in the top CMakeLists.txt is the source; every other file that states
the version must agree with it.

    check_versions.py SOURCE_DIR            checks the tree (test version.agree)
    check_versions.py SOURCE_DIR --detects  checks that each disagreement is
                                            found, on edited copies of the files
                                            (test version.check_detects_drift)

Derived by the build, so only the derivation is checked here (the values are
checked installed by tests/install/test_installed.py): the shared library's
VERSION and SOVERSION, the CMake package version file and ellipsa.pc.
Stated in files that must work without CMake, so compared here: the header's
ELLIPSA_VERSION_ macros (the library reports them), the Python package
(bindings-c/python/ellipsa/_version.py, read by pyproject.toml), the R
package's DESCRIPTION, and the C# assembly (AssemblyInfo.cs) with the
binding's BindingVersionNumber (Ellipsa.cs). Python standard library only.
"""
import os
import re
import shutil
import sys
import tempfile

# Each file: path, and how to read the version it states (None when absent).
FILES = {
    "cmake": "CMakeLists.txt",
    "header": "capi/include/ellipsa.h",
    "python": "bindings-c/python/ellipsa/_version.py",
    "pyproject": "bindings-c/python/pyproject.toml",
    "r": "bindings-c/r/DESCRIPTION",
    "assembly": "bindings-c/csharp/AssemblyInfo.cs",
    "csharp": "bindings-c/csharp/Ellipsa.cs",
    "capi_cmake": "capi/CMakeLists.txt",
    "install_cmake": "cmake/install.cmake",
    "pc": "cmake/ellipsa.pc.in",
}


def read(root, key):
    with open(os.path.join(root, FILES[key]), encoding="utf-8") as f:
        return f.read()


def one(pattern, text):
    m = re.search(pattern, text, flags=re.M)
    return m.group(1) if m else None


def check(root):
    """Problems found, as sentences naming the file; empty when all agree."""
    problems = []
    version = one(r"^project\(ellipsa\s+VERSION\s+(\d+\.\d+\.\d+)\b", read(root, "cmake"))
    if version is None:
        return ["%s: no project(ellipsa VERSION X.Y.Z)" % FILES["cmake"]]
    major, minor, patch = (int(v) for v in version.split("."))

    def expect(key, what, found, wanted):
        if found != wanted:
            problems.append("%s: %s is %r, the project's version %s gives %r"
                            % (FILES[key], what, found, version, wanted))

    header = read(root, "header")
    for name, value in (("MAJOR", major), ("MINOR", minor), ("PATCH", patch)):
        found = one(r"^#define ELLIPSA_VERSION_%s (\d+)\b" % name, header)
        expect("header", "ELLIPSA_VERSION_" + name, found and int(found), value)

    expect("python", "__version__", one(r'^__version__ = "([^"]*)"', read(root, "python")), version)
    pyproject = read(root, "pyproject")
    static = one(r'^version\s*=\s*"([^"]*)"', pyproject)
    if static is not None:
        expect("pyproject", "the static version", static, version)
    elif 'version = {attr = "ellipsa._version.__version__"}' not in pyproject:
        problems.append("%s: the version is neither static nor read from ellipsa/_version.py" % FILES["pyproject"])

    expect("r", "Version", one(r"^Version:\s*(\S+)\s*$", read(root, "r")), version)

    assembly = read(root, "assembly")
    expect("assembly", "AssemblyVersion", one(r'AssemblyVersion\("([^"]*)"\)', assembly), version + ".0")
    expect("assembly", "AssemblyFileVersion", one(r'AssemblyFileVersion\("([^"]*)"\)', assembly), version + ".0")
    expect("assembly", "AssemblyInformationalVersion",
           one(r'AssemblyInformationalVersion\("([^"]*)"\)', assembly), version)
    number = one(r"BindingVersionNumber = (\d+);", read(root, "csharp"))
    expect("csharp", "BindingVersionNumber", number and int(number), major * 10000 + minor * 100 + patch)

    # Derived by CMake: the derivation must stay (no literal version creeping in).
    if not re.search(r"VERSION \$\{PROJECT_VERSION\}\s+SOVERSION \$\{PROJECT_VERSION_MAJOR\}", read(root, "capi_cmake")):
        problems.append("%s: the library's VERSION/SOVERSION no longer come from PROJECT_VERSION" % FILES["capi_cmake"])
    install = read(root, "install_cmake")
    if "VERSION ${PROJECT_VERSION} COMPATIBILITY" not in install or \
            'set(ELLIPSA_PC_VERSION \\"${PROJECT_VERSION}\\")' not in install:
        problems.append("%s: the package or pkg-config version no longer comes from PROJECT_VERSION"
                        % FILES["install_cmake"])
    if one(r"^Version:\s*(\S+)", read(root, "pc")) != "@PC_VERSION@":
        problems.append("%s: Version is not @PC_VERSION@" % FILES["pc"])
    return problems


def edit(root, key, old, new):
    path = os.path.join(root, FILES[key])
    with open(path, encoding="utf-8") as f:
        text = f.read()
    if old not in text:
        sys.exit("FAIL: cannot make the drift: %r not in %s" % (old, FILES[key]))
    with open(path, "w", encoding="utf-8") as f:
        f.write(text.replace(old, new, 1))


def detects(source):
    """Each edit must produce a problem naming the edited file."""
    version = one(r"^project\(ellipsa\s+VERSION\s+(\d+\.\d+\.\d+)\b", read(source, "cmake"))
    if version is None:
        sys.exit("FAIL: no project version in %s" % FILES["cmake"])
    major, minor, patch = version.split(".")
    bumped = "%s.%s.%d" % (major, minor, int(patch) + 1)
    cases = [
        ("cmake", "VERSION " + version, "VERSION " + bumped),  # every stated copy now disagrees
        ("header", "#define ELLIPSA_VERSION_PATCH " + patch, "#define ELLIPSA_VERSION_PATCH %d" % (int(patch) + 1)),
        ("python", '"%s"' % version, '"%s"' % bumped),
        ("pyproject", 'version = {attr = "ellipsa._version.__version__"}', 'version = "%s"' % bumped),
        ("r", "Version: " + version, "Version: " + bumped),
        ("assembly", 'AssemblyVersion("%s.0")' % version, 'AssemblyVersion("%s.0")' % bumped),
        ("assembly", 'AssemblyInformationalVersion("%s")' % version, 'AssemblyInformationalVersion("%s")' % bumped),
        ("csharp", "BindingVersionNumber = ", "BindingVersionNumber = 1"),
        ("capi_cmake", "SOVERSION ${PROJECT_VERSION_MAJOR}", "SOVERSION " + major),
        ("install_cmake", "VERSION ${PROJECT_VERSION} COMPATIBILITY", "VERSION %s COMPATIBILITY" % version),
        ("pc", "Version: @PC_VERSION@", "Version: " + version),
    ]
    failures = []
    for key, old, new in cases:
        work = tempfile.mkdtemp(prefix="ellipsa-versions-")
        try:
            for rel in FILES.values():
                os.makedirs(os.path.dirname(os.path.join(work, rel)) or work, exist_ok=True)
                shutil.copy(os.path.join(source, rel), os.path.join(work, rel))
            if check(work):
                failures.append("the unedited copy already fails: %r" % check(work))
                break
            edit(work, key, old, new)
            found = check(work)
        finally:
            shutil.rmtree(work)
        named = FILES[key] if key != "cmake" else FILES["header"]  # a CMake bump shows up in the copies
        if not any(p.startswith(named + ":") for p in found):
            failures.append("%s edited (%r -> %r): not detected; found %r" % (FILES[key], old, new, found))
        else:
            print("detected: %s" % found[0])
    if failures:
        sys.exit("FAIL:\n  " + "\n  ".join(failures))


def main():
    if len(sys.argv) not in (2, 3) or (len(sys.argv) == 3 and sys.argv[2] != "--detects"):
        sys.exit("usage: check_versions.py SOURCE_DIR [--detects]")
    source = sys.argv[1]
    if len(sys.argv) == 3:
        detects(source)
        return
    problems = check(source)
    if problems:
        sys.exit("FAIL: the project's version is stated differently:\n  " + "\n  ".join(problems))
    version = one(r"^project\(ellipsa\s+VERSION\s+(\d+\.\d+\.\d+)\b", read(source, "cmake"))
    print("version %s everywhere: %s" % (version, ", ".join(sorted(set(FILES.values())))))


if __name__ == "__main__":
    main()
