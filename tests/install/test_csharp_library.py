#!/usr/bin/env python3
"""The C# binding built as a library by its project file and used, as a user's
program would, against the installed libellipsa (test install.csharp_library).

  1. xbuild builds bindings-c/csharp/Ellipsa.csproj into a scratch folder
     (output and intermediate folders outside the source tree): Ellipsa.dll
     and Ellipsa.dll.config;
  2. mcs compiles tests/bindings/SmokeTest.cs against that DLL only
     (-r:Ellipsa.dll, no binding source), and a probe that prints the
     assembly's version, the loaded library's version and the file Mono
     loaded (from /proc/self/maps);
  3. both run under mono from the scratch folder with the prefix's lib folder
     on LD_LIBRARY_PATH: the smoke test passes, the DLL's version is the
     project's, and the library comes from the prefix.

Needs the prefix install.into_prefix fills (fixture ellipsa_installed).
Python standard library only; environment as test_installed.py, plus
ELLIPSA_XBUILD, ELLIPSA_MCS and ELLIPSA_MONO.
"""
import os
import shutil
import subprocess
import sys

ENV = os.environ
SOURCE = ENV["ELLIPSA_SOURCE_DIR"]
VERSION = ENV["ELLIPSA_VERSION"]
LIBDIR = ENV["ELLIPSA_INSTALL_LIBDIR"]
WORK = os.path.join(ENV["ELLIPSA_INSTALL_WORK"], "csharp")
PREFIX = os.path.join(ENV["ELLIPSA_INSTALL_WORK"], "prefix")  # filled by install.into_prefix
PROJECT = os.path.join(SOURCE, "bindings-c", "csharp", "Ellipsa.csproj")
SMOKE = os.path.join(SOURCE, "tests", "bindings", "SmokeTest.cs")

PROBE = r"""
using System;
using System.IO;
static class Probe
{
    static int Main()
    {
        Console.WriteLine(typeof(Ellipsa.Library).Assembly.GetName().Version);
        Console.WriteLine(Ellipsa.Library.Version);
        foreach (string line in File.ReadAllLines("/proc/self/maps"))
        {
            int slash = line.IndexOf('/');
            if (slash >= 0 && Path.GetFileName(line.Substring(slash)).StartsWith("libellipsa.so"))
            {
                Console.WriteLine(line.Substring(slash));
                return 0;
            }
        }
        Console.WriteLine("(libellipsa not mapped)");
        return 1;
    }
}
"""


def run(args, env=None, cwd=None):
    p = subprocess.run(args, env=env, cwd=cwd, stdout=subprocess.PIPE,
                       stderr=subprocess.STDOUT, universal_newlines=True)
    return p.returncode, p.stdout


def must(args, env=None, cwd=None):
    code, out = run(args, env, cwd)
    if code != 0:
        sys.exit("FAIL: %s exited %d:\n%s" % (" ".join(args), code, out))
    return out


def user_env(**extra):
    env = dict(ENV)
    for name in ("LD_LIBRARY_PATH", "MONO_PATH", "ELLIPSA_CROSS_DIR"):
        env.pop(name, None)
    env.update(extra)
    return env


def main():
    library_file = os.path.join(PREFIX, LIBDIR, "libellipsa.so." + VERSION)
    if not os.path.isfile(library_file):
        sys.exit("FAIL: %s missing: install.into_prefix must run first" % library_file)
    if os.path.exists(WORK):
        shutil.rmtree(WORK)
    os.makedirs(WORK)
    out_dir = os.path.join(WORK, "bin") + os.sep
    obj_dir = os.path.join(WORK, "obj") + os.sep
    out = must([ENV["ELLIPSA_XBUILD"], "/nologo", "/verbosity:minimal", "/p:Configuration=Release",
                "/p:OutputPath=" + out_dir, "/p:BaseIntermediateOutputPath=" + obj_dir, PROJECT],
               env=user_env(), cwd=WORK)
    dll = os.path.join(out_dir, "Ellipsa.dll")
    for path in (dll, dll + ".config"):
        if not os.path.isfile(path):
            sys.exit("FAIL: the project built no %s:\n%s" % (path, out))
    print("xbuild Ellipsa.csproj: %s" % dll)

    # Consumers compiled against the DLL alone, placed beside it as a user's
    # application would be.
    smoke_exe = os.path.join(out_dir, "smoke.exe")
    probe_exe = os.path.join(out_dir, "probe.exe")
    probe_cs = os.path.join(WORK, "Probe.cs")
    with open(probe_cs, "w") as f:
        f.write(PROBE)
    must([ENV["ELLIPSA_MCS"], "-warnaserror", "-r:" + dll, "-out:" + smoke_exe, SMOKE], env=user_env())
    must([ENV["ELLIPSA_MCS"], "-warnaserror", "-r:" + dll, "-out:" + probe_exe, probe_cs], env=user_env())

    env = user_env(LD_LIBRARY_PATH=os.path.join(PREFIX, LIBDIR), OPENBLAS_NUM_THREADS="1")
    lines = must([ENV["ELLIPSA_MONO"], probe_exe], env=env, cwd=WORK).strip().splitlines()
    if len(lines) != 3:
        sys.exit("FAIL: probe printed %r" % lines)
    assembly_version, library_version, loaded = lines
    bad = []
    if assembly_version != VERSION + ".0":
        bad.append("Ellipsa.dll version %s, project version %s" % (assembly_version, VERSION))
    if library_version != VERSION:
        bad.append("loaded library version %s, expected %s" % (library_version, VERSION))
    if os.path.realpath(loaded) != os.path.realpath(library_file):
        bad.append("Mono loaded %s, not the installed %s" % (loaded, library_file))
    if bad:
        sys.exit("FAIL:\n  " + "\n  ".join(bad))
    print("Ellipsa.dll %s loads %s" % (assembly_version, loaded))
    out = must([ENV["ELLIPSA_MONO"], "--debug", smoke_exe], env=env, cwd=WORK)
    print(out.strip().splitlines()[-1] if out.strip() else "")
    print("tests/bindings/SmokeTest.cs against Ellipsa.dll and the installed library: passes")


if __name__ == "__main__":
    main()
