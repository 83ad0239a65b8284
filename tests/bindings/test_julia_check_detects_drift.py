#!/usr/bin/env python3
"""The Julia signature check must be able to fail (a test of check_julia_ccalls.py).

Each case edits a copy of bindings-c/julia/Ellipsa.jl or of capi/include/ellipsa.h
in a scratch directory (the tree is never touched), runs the checker on it and
expects exit status 1 with a line naming what drifted. The unedited pair must
pass. Cases: a wrong argument type, a missing argument, a wrong return type, a
misspelt function name, a computed ccall name, a Julia struct whose layout no
longer matches, a header parameter widened, a header function removed, a header
struct field inserted, and a callback with the wrong signature.
"""
import os
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
CHECKER = os.path.join(HERE, "check_julia_ccalls.py")
JULIA = os.path.join(ROOT, "bindings-c", "julia", "Ellipsa.jl")
HEADER = os.path.join(ROOT, "capi", "include", "ellipsa.h")

# (name, file edited, old text, new text, words the failure line must contain)
CASES = [
    ("argument type", "julia",
     "(Ref{CScores}, Ptr{Cvoid}, Ref{CMatrix}, Cdouble)", "(Ref{CScores}, Ptr{Cvoid}, Ref{CMatrix}, Cfloat)",
     ["ellipsa_model_score argument 4", "double"]),
    ("argument count", "julia",
     "(Ptr{Cdouble}, Int64, Ptr{Cdouble}, Int64, Ptr{Cvoid}), loc, p, buf, p * p, handle(m))",
     "(Ptr{Cdouble}, Int64, Ptr{Cdouble}, Ptr{Cvoid}), loc, p, buf, handle(m))",
     ["ellipsa_model_raw_estimate takes 5 arguments", "declares 4"]),
    ("return type", "julia",
     "check(ccall((:ellipsa_hotelling_limit, libellipsa), Int32,",
     "check(ccall((:ellipsa_hotelling_limit, libellipsa), Int64,",
     ["ellipsa_hotelling_limit returns"]),
    ("function name", "julia",
     "(:ellipsa_model_rows, libellipsa)", "(:ellipsa_model_row_count, libellipsa)",
     ["ellipsa_model_row_count is not declared"]),
    ("computed name", "julia",
     "(:ellipsa_chi2_tail, libellipsa)", "(Symbol(\"ellipsa_chi2_\", \"tail\"), libellipsa)",
     ["cannot be checked"]),
    ("Julia struct layout", "julia",
     "    rows::Int64\n    cols::Int64\n", "    rows::Int32\n    cols::Int64\n",
     ["CMatrix.rows at offset 8 (4 bytes)", "ellipsa_matrix.rows at offset 8 (8 bytes)"]),
    ("header parameter widened", "header",
     "ellipsa_status ellipsa_chi2_tail(double *out, double x, double df);",
     "ellipsa_status ellipsa_chi2_tail(double *out, double x, long double df);",
     ["ellipsa_chi2_tail argument 3", "long double"]),
    ("header function removed", "header",
     "ELLIPSA_API ellipsa_status ellipsa_beta_tail(double *out, double x, double a, double b);", "",
     ["ellipsa_beta_tail is not declared"]),
    ("header struct field inserted", "header",
     "  int32_t *flag;              /**<", "  double *weight; int32_t *flag; /**<",
     ["CScores", "ellipsa_scores"]),
    ("callback signature", "julia",
     "@cfunction(progress_trampoline, Cint, (Cstring, Cdouble, Ptr{Cvoid}))",
     "@cfunction(progress_trampoline, Cint, (Cstring, Cfloat, Ptr{Cvoid}))",
     ["matches no callback type"]),
]


def run(julia, header_dir):
    out = subprocess.run([sys.executable, CHECKER, "--julia", julia, "--header-dir", header_dir],
                         stdout=subprocess.PIPE, stderr=subprocess.STDOUT, universal_newlines=True)
    return out.returncode, out.stdout


def main():
    failures = 0
    code, text = run(JULIA, os.path.dirname(HEADER))
    print(text.strip().splitlines()[-1])
    if code != 0:
        print("FAIL the unedited binding and header must pass:\n" + text)
        failures += 1
    with tempfile.TemporaryDirectory() as work:
        for name, which, old, new, words in CASES:
            case_dir = os.path.join(work, name.replace(" ", "_"))
            os.makedirs(case_dir)
            julia = os.path.join(case_dir, "Ellipsa.jl")
            shutil.copy(JULIA, julia)
            shutil.copy(HEADER, os.path.join(case_dir, "ellipsa.h"))
            target = julia if which == "julia" else os.path.join(case_dir, "ellipsa.h")
            src = open(target, encoding="utf-8").read()
            if src.count(old) != 1:
                print("FAIL %s: the text to edit is not found exactly once in the %s (update this test)"
                      % (name, which))
                failures += 1
                continue
            open(target, "w", encoding="utf-8").write(src.replace(old, new))
            code, text = run(julia, case_dir)
            lines = [l for l in text.splitlines() if l.startswith("MISMATCH")]
            named = any(all(w in l for w in words) for l in lines)
            if code == 1 and named:
                print("ok   %s: detected: %s" % (name, next(l for l in lines if all(w in l for w in words))))
            else:
                print("FAIL %s: exit %d, expected 1 with a line containing %s; output:\n%s"
                      % (name, code, words, text))
                failures += 1
    print("%d of %d drift cases detected" % (len(CASES) - failures, len(CASES)) if failures == 0
          else "%d failures" % failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
