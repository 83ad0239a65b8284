#!/usr/bin/python3
"""Side by side in one run: the C interface (through ctypes, which adds a call
and no copy), the Python binding against NumPy, and the R binding against base
R (cov, mahalanobis), on the same data, at 1 and 2 library threads.

  /usr/bin/python3 bench/side_by_side.py BUILD_DIR [--quick]

Every time is the best of REPEATS runs. The Python measurements run in one
process that alternates the library's thread count (ELLIPSA_THREADS, which the
library reads at each call) between 1 and 2 from one run to the next, so that
a drift of the shared machine's speed over the minutes of the benchmark falls
on both counts alike (run one after the other, the two halves once gave
speed-ups from 0.85 to 2.77 on two cores). R runs once per thread setting.
OPENBLAS_NUM_THREADS=1 everywhere, so NumPy, R and the library's BLAS calls use
one core each and only the library's own threads differ.
Ratios are printed beside the times; docs/performance.md keeps the table.
"""
import ctypes as c
import json
import os
import platform
import subprocess
import sys
import tempfile
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
SRC = os.path.dirname(HERE)
REPEATS = 3


THREADS = (1, 2)


def best(f, repeats=REPEATS):
    """Best time of f at each library thread count in THREADS, the counts
    alternating run by run; a tuple in the order of THREADS."""
    times = {t: [] for t in THREADS}
    for _ in range(repeats):
        for t in THREADS:
            os.environ["ELLIPSA_THREADS"] = str(t)
            t0 = time.perf_counter()
            f()
            times[t].append(time.perf_counter() - t0)
    return tuple(min(times[t]) for t in THREADS)


def python_worker(build, shapes):
    """Times every thread count of THREADS; each row's values are tuples."""
    sys.path.insert(0, os.path.join(SRC, "bindings-c", "python"))
    os.environ.setdefault("ELLIPSA_LIBRARY", os.path.join(build, "lib", "libellipsa.so"))
    import ellipsa  # noqa: E402
    from ellipsa import _lib  # noqa: E402
    from ellipsa._matrix import to_view  # noqa: E402

    lib = _lib.lib
    rows = []
    for n, p in shapes:
        x = np.random.default_rng(15).standard_normal((n, p))  # C-ordered
        xf = np.asfortranarray(x)
        r = {"n": (n,) * len(THREADS), "p": (p,) * len(THREADS)}
        # Bounds: one read of the data (a vectorised sum) and one write of n doubles.
        r["read"] = best(lambda: x.sum())
        out = np.empty(n)
        r["write"] = best(lambda: out.fill(1.0))
        r["py_cov_c"] = best(lambda: ellipsa.fit(x, method="classical"))
        r["py_cov_f"] = best(lambda: ellipsa.fit(xf, method="classical"))
        r["np_cov"] = best(lambda: np.cov(x, rowvar=False))
        model = ellipsa.fit(x, method="classical")
        r["py_d2"] = best(lambda: model.score(x, fields=("squared_distance",)))
        r["py_d2_f"] = best(lambda: model.score(xf, fields=("squared_distance",)))
        r["py_score_all"] = best(lambda: model.score(x, fields=("squared_distance", "p_value", "flag")))
        mean = x.mean(axis=0)
        chol = np.linalg.cholesky(np.cov(x, rowvar=False))

        def np_d2():
            z = np.linalg.solve(chol, (x - mean).T)
            return (z * z).sum(axis=0)
        r["np_d2"] = best(np_d2)
        d2_np = np_d2()
        d2_el = model.score(x, fields=("squared_distance",)).squared_distance
        r["d2_max_rel_diff"] = (float(np.max(np.abs(d2_el - d2_np) / np.maximum(d2_np, 1e-300))),) * len(THREADS)
        # The C interface itself: ellipsa_model_score_v3 with only the distance buffer.
        d2 = np.empty(n)
        scores = _lib.ScoresBuffers()
        scores.struct_size = c.sizeof(_lib.ScoresBuffers)
        scores.squared_distance = d2.ctypes.data_as(c.POINTER(c.c_double))
        view = to_view(x)
        fn = lib.ellipsa_model_score_v3
        fn.restype = c.c_int32
        handle = model._h()

        def c_d2():
            st = fn(c.byref(scores), handle, c.byref(view.matrix), c.c_double(0.975), c.c_int32(0), c.c_int32(0))
            assert st == 0
        r["c_d2"] = best(c_d2)
        if n == 100000 and p == 10:
            # Robust and mixture fits at 1e5 x 10 (4 invented clusters for the
            # mixture), best of 3: a single run also times the first touch of
            # the fit's memory (about 115 against 75 ms for FAST-MCD here).
            xm = x[:100000].copy()
            r["mcd"] = best(lambda: ellipsa.fit(xm, method="mcd", seed=1), 3)
            r["detmcd"] = best(lambda: ellipsa.fit(xm, method="detmcd"), 3)
            cl = xm.copy()
            cl[:, 0] += 8.0 * (np.arange(100000) % 4)
            r["mix4"] = best(lambda: ellipsa.fit(cl, method="mixture", components=4, seed=1, restarts=1), 3)
            r["mix5"] = best(lambda: ellipsa.fit(cl, method="mixture", components=5, seed=1, restarts=1), 3)
        rows.append(r)
        del x, xf
    return rows


R_SCRIPT = r'''
args <- commandArgs(trailingOnly = TRUE)
r_dir <- args[1]; inc <- args[2]; libdir <- args[3]; scratch <- args[4]; data <- args[5]
n <- as.integer(args[6]); p <- as.integer(args[7])
for (f in sort(list.files(file.path(r_dir, "R"), pattern = "\\.R$", full.names = TRUE))) source(f)
glue <- ellipsa_build_glue(r_dir, inc, libdir, scratch)
invisible(ellipsa_load_library(glue))
x <- matrix(readBin(data, "double", n * p), ncol = p, byrow = TRUE)
best <- function(f) min(sapply(1:3, function(i) system.time(f())[["elapsed"]]))
m <- colMeans(x); S <- cov(x)
model <- ellipsa_fit(x, method = "classical")
cat(sprintf('{"r_cov": %g, "r_mahalanobis": %g, "rb_cov": %g, "rb_score": %g}\n',
            best(function() cov(x)), best(function() mahalanobis(x, m, S)),
            best(function() ellipsa_fit(x, method = "classical")),
            best(function() ellipsa_score(model, x))))
'''


def r_times(build, n, p, threads):
    with tempfile.TemporaryDirectory() as tmp:
        data = os.path.join(tmp, "x.bin")
        np.random.default_rng(15).standard_normal((n, p)).tofile(data)
        script = os.path.join(tmp, "bench.R")
        with open(script, "w") as f:
            f.write(R_SCRIPT)
        env = dict(os.environ, OPENBLAS_NUM_THREADS="1", ELLIPSA_THREADS=str(threads))
        out = subprocess.run(["Rscript", "--vanilla", script, os.path.join(SRC, "bindings-c", "r"),
                              os.path.join(SRC, "capi", "include"), os.path.join(build, "lib"),
                              os.path.join(tmp, "glue"), data, str(n), str(p)],
                             capture_output=True, text=True, env=env, timeout=900)
        if out.returncode != 0:
            return {"r_error": out.stderr.strip()[-300:]}
        return json.loads(out.stdout.strip().splitlines()[-1])


def machine():
    cpu = "?"
    with open("/proc/cpuinfo") as f:
        for line in f:
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    return f"{cpu}, {os.cpu_count()} cores visible, {platform.system()} {platform.release()}, NumPy {np.__version__}"


def ms(v):
    return f"{1000 * v:.1f}"


def main():
    build = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else "build")
    quick = "--quick" in sys.argv
    shapes = [(100000, 10), (1000000, 10)] + ([] if quick else [(1000000, 50)])
    if len(sys.argv) > 2 and sys.argv[2] == "--worker":
        print(json.dumps(python_worker(build, shapes)))
        return
    print("machine:", machine())
    print("OPENBLAS_NUM_THREADS=1 for every row; ELLIPSA_THREADS as stated\n")
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1")
    args = [sys.executable, __file__, build, "--worker"] + (["--quick"] if quick else [])
    out = subprocess.run(args, capture_output=True, text=True, env=env, timeout=1800)
    if out.returncode != 0:
        sys.exit("python worker failed: " + out.stderr[-2000:])
    paired = json.loads(out.stdout.strip().splitlines()[-1])
    results = {}
    for i, threads in enumerate(THREADS):
        rows = [{key: v[i] for key, v in r.items()} for r in paired]
        for r in rows:
            r.update(r_times(build, r["n"], r["p"], threads))
        results[threads] = rows
    print("| shape | thr | cov: ellipsa C-order / F-order / NumPy / base R / R binding (ms) | cov ratio NumPy/ellipsa, R/ellipsa "
          "| d2: C interface / Python / NumPy / base R / R binding (all fields) (ms) | d2 ratio NumPy/ellipsa, R/ellipsa "
          "| d2 / (read + write) |")
    print("|---|---|---|---|---|---|---|")
    for threads, rows in results.items():
        for r in rows:
            rc, rm = r.get("r_cov", float("nan")), r.get("r_mahalanobis", float("nan"))
            print(f"| {r['n']:.0e} x {r['p']} | {threads} | {ms(r['py_cov_c'])} / {ms(r['py_cov_f'])} / {ms(r['np_cov'])} / "
                  f"{ms(rc)} / {ms(r.get('rb_cov', float('nan')))} | {r['np_cov'] / r['py_cov_c']:.2f}, {rc / r['py_cov_c']:.2f} | "
                  f"{ms(r['c_d2'])} / {ms(r['py_d2'])} / {ms(r['np_d2'])} / {ms(rm)} / {ms(r.get('rb_score', float('nan')))} | "
                  f"{r['np_d2'] / r['py_d2']:.2f}, {rm / r['py_d2']:.2f} | {r['py_d2'] / (r['read'] + r['write']):.2f} |")
            if "r_error" in r:
                print("  R failed:", r["r_error"])
    print()
    one, two = results[1], results[2]
    print("| shape | kernel | 1 thread (ms) | 2 threads (ms) | speed-up |")
    print("|---|---|---|---|---|")
    for a, b in zip(one, two):
        for key, name in (("py_cov_c", "covariance (C-order)"), ("py_d2", "squared distances"),
                          ("py_score_all", "d2 + p-value + flag"), ("mcd", "FAST-MCD fit"), ("detmcd", "DetMCD fit"),
                          ("mix4", "mixture K=4"), ("mix5", "mixture K=5")):
            if key in a:
                print(f"| {a['n']:.0e} x {a['p']} | {name} | {ms(a[key])} | {ms(b[key])} | {a[key] / b[key]:.2f} |")
    for a in one:
        if "mcd" in a:
            print(f"\nat 1e5 x 10, 1 thread: FAST-MCD = {a['mcd'] / a['py_cov_c']:.0f} classical-covariance "
                  f"equivalents (Python binding, C-order), DetMCD / FAST-MCD = {a['detmcd'] / a['mcd']:.2f}, "
                  f"mixture K=5 / K=4 = {a['mix5'] / a['mix4']:.2f}")
        if a["n"] == 1000000 and a["p"] == 10:
            print(f"1e6 x 10 read {ms(a['read'])} ms, write {ms(a['write'])} ms; d2 max relative difference to NumPy "
                  f"{a['d2_max_rel_diff']:.1e}")


if __name__ == "__main__":
    main()
