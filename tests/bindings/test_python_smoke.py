#!/usr/bin/env python3
"""Smoke test of the Python binding (bindings-c/python) over the shared library.

Plain script: every check is an assert; any failure exits non-zero. With NumPy
the numbers are checked against independent NumPy computations; the list path
(no NumPy) runs in a child interpreter in which `import numpy` fails, and its
results must equal the NumPy path bit for bit. Without NumPy only the list path
runs, against pure-Python checks.

Environment: ELLIPSA_LIBRARY (the shared library), PYTHONPATH (the package),
ELLIPSA_CROSS_DIR (optional: python_model.json is written there).
"""
import ctypes
import json
import math
import os
import random
import subprocess
import sys

LISTS_ONLY = os.environ.get("ELLIPSA_TEST_BLOCK_NUMPY") == "1"
if LISTS_ONLY:
    sys.modules["numpy"] = None  # makes `import numpy` raise ImportError

import ellipsa  # noqa: E402

try:
    import numpy as np
except ImportError:
    np = None

CHECKS = [0]


def check(condition, what):
    CHECKS[0] += 1
    if not condition:  # not `assert`: must also fail under python -O
        raise AssertionError(what)


def list_data(seed, n, p):
    """Correlated rows from Python's own generator, so both interpreters see the
    same numbers: x_j = z_j + 0.5 z_{j-1} + 10 j."""
    rng = random.Random(seed)
    rows = []
    for _ in range(n):
        z = [rng.gauss(0.0, 1.0) for _ in range(p)]
        rows.append([z[j] + (0.5 * z[j - 1] if j else 0.0) + 10.0 * j for j in range(p)])
    return rows


def close(a, b, rel):
    return abs(a - b) <= rel * max(1.0, abs(a), abs(b))


# --------------------------------------------------------------------------
# The list path: lists in, lists out. Checks need no linear algebra.
def list_path():
    """Fits and scores with lists. Returns the numbers the NumPy path must match."""
    rows = list_data(11, 60, 3)
    rows_with_gap = [r[:] for r in rows] + [[1.0, None, 3.0]]
    if ellipsa.HAVE_NUMPY:
        ellipsa.set_output("lists")
    try:
        model = ellipsa.fit(rows_with_gap, method="classical", columns=["a", "b", "c"])
        check(model.kind == "gaussian" and model.method == "classical", "describe (lists)")
        check(model.columns == ["a", "b", "c"], "column names (lists)")
        check(model.rows_used == 60 and model.rows_dropped == 1, "row counts (lists)")
        check(list(model.dropped_rows) == [60], "dropped row index (lists)")
        location, scatter = model.location, model.scatter
        check(isinstance(location, list) and isinstance(scatter[0], list), "list output")
        n, p = 60, 3
        for j in range(p):  # mean by compensated summation
            check(close(location[j], math.fsum(r[j] for r in rows) / n, 1e-13), "mean (lists)")
        for j in range(p):  # two-pass covariance, divisor n-1
            for k in range(p):
                mj = math.fsum(r[j] for r in rows) / n
                mk = math.fsum(r[k] for r in rows) / n
                ref = math.fsum((r[j] - mj) * (r[k] - mk) for r in rows) / (n - 1)
                check(close(scatter[j][k], ref, 1e-12), "covariance (lists)")
        scores = model.score(rows + [[1.0, None, 3.0]], level=0.975)
        d2 = scores.squared_distance
        # Under the unbiased fit, the fitting rows' distances sum to (n-1) p.
        check(close(math.fsum(d2[:n]), (n - 1) * p, 1e-10), "sum of d2 = (n-1)p (lists)")
        for i in range(n):
            check(close(math.fsum(scores.contribution[i]), d2[i], 1e-10), "contributions sum")
        check(scores.observed[n] == 2 and scores.observed[0] == 3, "observed count with a gap")
        check(math.isnan(scores.contribution[n][1]), "contribution of a missing value is NaN")
        text = model.save()
        again = ellipsa.load(text)
        check(again.save() == text, "save -> load -> save (lists)")
        check(again.score(rows).squared_distance == d2[:n], "scores after reload (lists)")
        return {"location": location, "scatter": scatter, "d2": d2[:n],
                "p_value": scores.p_value[:n], "text": text}
    finally:
        if ellipsa.HAVE_NUMPY:
            ellipsa.set_output("numpy")


def expect_error(call, status_name, function):
    try:
        call()
    except ellipsa.Error as error:
        check(isinstance(error, Exception), "Error is an Exception")
        check(error.status_name == status_name, "status %s, got %s" % (status_name, error.status_name))
        check(error.status == {"ELLIPSA_ERR_DATA": 10, "ELLIPSA_ERR_FORMAT": 11,
                               "ELLIPSA_ERR_SHAPE": 3, "ELLIPSA_ERR_ARGUMENT": 2,
                               "ELLIPSA_ERR_STATE": 4}[status_name], "status code")
        check(error.message.startswith(function), "message names %s: %r" % (function, error.message))
        check(len(error.message) > len(function) + 3, "message has details")
        return error
    raise AssertionError("expected ellipsa.Error %s" % status_name)


def errors_any_path():
    expect_error(lambda: ellipsa.fit([[float(i + j * j) for j in range(5)] for i in range(3)],
                                     method="classical"), "ELLIPSA_ERR_DATA", "ellipsa_model_fit")
    expect_error(lambda: ellipsa.load("{}"), "ELLIPSA_ERR_FORMAT", "ellipsa_model_load")
    expect_error(lambda: ellipsa.chi2_quantile(1.5, 2.0), "ELLIPSA_ERR_ARGUMENT", "ellipsa_chi2_quantile")
    # Closed forms: chi-square with 2 df has quantile -2 ln(1-q).
    check(close(ellipsa.chi2_quantile(0.9, 2.0), -2.0 * math.log(0.1), 1e-13), "chi2 quantile df=2")
    check(close(ellipsa.chi2_tail(3.0, 2.0), math.exp(-1.5), 1e-13), "chi2 tail df=2")


# --------------------------------------------------------------------------
# The NumPy path, against independent NumPy computations.
def bits(a):
    return np.ascontiguousarray(a).tobytes()


def same_bits(a, b):
    return a.shape == b.shape and a.dtype == b.dtype and bits(a) == bits(b)


def layouts(x):
    """The same values as a C-order array, a Fortran-order array and a strided
    slice of a larger buffer."""
    n, p = x.shape
    big = np.full((2 * n, p + 3), -7.0)
    big[::2, 1:p + 1] = x
    sliced = big[::2, 1:p + 1]
    check(not sliced.flags.c_contiguous and not sliced.flags.f_contiguous, "slice is strided")
    return {"C": np.ascontiguousarray(x), "F": np.asfortranarray(x), "slice": sliced}


def numpy_classical(rng):
    from ellipsa import _matrix
    n, p = 200, 4
    a = rng.normal(size=(p, p)) + 2.0 * np.eye(p)
    x = rng.normal(size=(n, p)) @ a + np.array([1.0, -2.0, 1e3, 0.5])
    new = rng.normal(size=(40, p)) @ a * 1.5 + np.array([1.0, -2.0, 1e3, 0.5])

    model = ellipsa.fit(x, method="classical")
    check(model.columns == ["x1", "x2", "x3", "x4"], "default column names")
    check(np.allclose(model.location, np.mean(x, axis=0), rtol=1e-13, atol=0), "mean vs numpy")
    scale = np.max(np.abs(np.cov(x, rowvar=False)))
    check(np.max(np.abs(model.scatter - np.cov(x, rowvar=False))) <= 1e-12 * scale, "cov vs numpy")
    ml = ellipsa.fit(x, method="classical", divisor="n")
    check(np.max(np.abs(ml.scatter - np.cov(x, rowvar=False, bias=True))) <= 1e-12 * scale, "cov /n")
    check(ml.diagnostic("divisor") == 1.0 and model.diagnostic("divisor") == 2.0, "divisor diag")

    s = model.score(new, level=0.975)
    t, sc = np.mean(x, axis=0), np.cov(x, rowvar=False)
    d = new - t
    solved = np.linalg.solve(sc, d.T).T
    d2 = np.sum(d * solved, axis=1)
    check(np.allclose(s.squared_distance, d2, rtol=1e-10, atol=0), "d2 vs numpy.linalg.solve")
    check(np.allclose(s.contribution, d * solved, rtol=1e-8, atol=1e-10 * np.max(d2)), "contributions")
    # The new-rows reference (Tracy, Young & Mason 1992): with m fitting rows
    # and p = 4, F = m(m-p) d2 / (p(m+1)(m-1)) ~ F(4, m-4), whose upper tail
    # is I_u(a, 2) = u^a (1 + a(1-u)), u = (m-p)/(m-p + p F), a = (m-p)/2
    # (the regularized incomplete beta with an integer second shape).
    m_rows, pp = x.shape
    f = m_rows * (m_rows - pp) * d2 / (pp * (m_rows + 1) * (m_rows - 1))
    u = (m_rows - pp) / (m_rows - pp + pp * f)
    a = (m_rows - pp) / 2
    check(np.allclose(s.p_value, u ** a * (1 + a * (1 - u)), rtol=1e-9, atol=0), "p-values (phase II F)")
    q = ellipsa.chi2_quantile(0.975, 4)
    check(close(math.exp(-q / 2) * (1 + q / 2), 0.025, 1e-12), "chi2 quantile df=4")
    check(np.array_equal(s.flag, (s.p_value < 0.025).astype(np.int32)), "flags at the level")
    check(np.all(s.observed == p) and np.all(s.component == 0) and np.all(s.membership == 1.0), "gauss")
    for j in range(p):
        keep = [k for k in range(p) if k != j]
        dj = d[:, keep]
        d2j = np.sum(dj * np.linalg.solve(sc[np.ix_(keep, keep)], dj.T).T, axis=1)
        check(np.allclose(s.conditional_drop[:, j], d2 - d2j, rtol=1e-8, atol=1e-9 * np.max(d2)),
              "conditional drop of variable %d" % j)
    logdet = np.linalg.slogdet(sc)[1]
    check(np.allclose(s.log_density, -0.5 * (p * math.log(2 * math.pi) + logdet + d2), rtol=1e-10),
          "log-density")
    check(close(model.diagnostic("log_det"), logdet, 1e-10), "log_det diagnostic")
    expect_error(lambda: model.h_subset, "ELLIPSA_ERR_STATE", "ellipsa_model_row_set")
    expect_error(lambda: model.score(new[:, :3]), "ELLIPSA_ERR_SHAPE", "ellipsa_model_score")

    # Every layout is read in place and gives the same bits.
    for name, arr in layouts(x).items():
        view = _matrix.to_view(arr)
        check(not view.copied and ctypes.addressof(view.matrix.data.contents) == arr.ctypes.data,
              "%s layout passed without copy" % name)
        m = ellipsa.fit(arr, method="classical")
        check(same_bits(m.location, model.location) and same_bits(m.scatter, model.scatter),
              "classical fit, %s layout bitwise" % name)
    for name, arr in layouts(new).items():
        r = model.score(arr)
        for field in ellipsa.SCORE_FIELDS:
            check(same_bits(getattr(r, field), getattr(s, field)), "score %s, %s layout" % (field, name))
    check(_matrix.to_view(np.rint(x).astype(np.int64)).copied, "integers are converted")
    # A stride of 0 repeats a row: every repeated row scores the same.
    repeated = np.broadcast_to(new[3], (5, p))
    check(repeated.strides[0] == 0 and not _matrix.to_view(repeated).copied, "stride 0 in place")
    check(np.all(model.score(repeated).squared_distance == s.squared_distance[3]), "stride 0 scores")
    check(_matrix.to_view(x[::-1]).copied, "negative strides are converted")
    return model, new, s


def numpy_mcd(rng):
    n, p = 120, 3
    x = rng.normal(size=(n, p)) @ np.array([[1.0, 0.3, 0.0], [0.0, 1.0, 0.4], [0.0, 0.0, 1.0]])
    planted = np.arange(0, n, 10)  # 12 rows moved 12 units away
    x[planted] += np.array([12.0, -12.0, 12.0])
    model = ellipsa.fit(x, method="mcd", seed=20240611)
    check(model.method == "mcd" and model.kind == "gaussian", "mcd describe")
    h = (n + p + 1) // 2
    check(model.diagnostic("h") == h and len(model.h_subset) == h, "h = floor((n+p+1)/2)")
    outliers = model.outliers
    check(set(planted.tolist()) <= set(outliers.tolist()), "planted rows flagged")
    check(not set(model.h_subset.tolist()) & set(planted.tolist()), "h-subset avoids planted rows")
    # Raw location = mean of the h-subset; final = mean of the rows kept by reweighting.
    check(np.allclose(model.raw_location, x[model.h_subset].mean(axis=0), rtol=1e-12, atol=1e-14),
          "raw location = mean of h-subset")
    kept = np.setdiff1d(np.arange(n), outliers)
    check(np.allclose(model.location, x[kept].mean(axis=0), rtol=1e-12, atol=1e-14),
          "reweighted location = mean of kept rows")
    ratio = model.raw_scatter / np.cov(x[model.h_subset], rowvar=False)
    check(np.allclose(ratio, ratio[0, 0], rtol=1e-10), "raw scatter proportional to h-subset cov")
    for name, arr in layouts(x).items():
        m = ellipsa.fit(arr, method="mcd", seed=20240611)
        check(same_bits(m.location, model.location) and same_bits(m.scatter, model.scatter)
              and same_bits(m.h_subset, model.h_subset), "mcd fit, %s layout bitwise" % name)
    # Progress reaches Python; an exception in the callback cancels the fit.
    seen = []
    ellipsa.fit(x, method="mcd", seed=20240611, progress=lambda stage, f: seen.append(f))
    check(seen and seen == sorted(seen) and 0.0 <= seen[0] and seen[-1] == 1.0, "progress fractions")

    class Stop(Exception):
        pass

    def stop(stage, fraction):
        raise Stop(stage)
    try:
        ellipsa.fit(x, method="mcd", seed=20240611, progress=stop)
        check(False, "a raising progress callback cancels the fit")
    except Stop:
        pass
    with ellipsa.fit(x, method="mcd", seed=20240611) as again:
        check(same_bits(again.raw_scatter, model.raw_scatter), "same seed, same bits")
    check(again._handle is None, "context manager freed the handle")
    return model, x


def numpy_mixture(rng):
    x = np.vstack([rng.normal(size=(150, 2)), rng.normal(size=(150, 2)) + np.array([8.0, 8.0])])
    model = ellipsa.fit(x, method="mixture", components=(1, 3), seed=5)
    table = model.selection
    check(len(table) == 3 and sum(c["chosen"] for c in table) == 1, "selection table")
    chosen = [c for c in table if c["chosen"]][0]
    check(chosen["components"] == 2 == model.n_components, "two clusters chosen")
    check(chosen["bic"] == min(c["bic"] for c in table), "lowest BIC chosen")
    weights = [w for w, _, _ in model.components]
    check(close(sum(weights), 1.0, 1e-12), "weights sum to 1")
    s = model.score(x)
    check(s.membership.shape == (300, 2) and np.allclose(s.membership.sum(axis=1), 1.0), "membership")
    check(len(set(s.component[:150].tolist())) == 1 and s.component[0] != s.component[-1], "labels")
    text = model.save()
    check(ellipsa.load(text).save() == text, "mixture round trip")
    # A K range beyond the rows keeps the K that fit; the others carry their
    # reason (the exact wording is ellipsa's own, pinned in tests/core too).
    small = ellipsa.fit([[0.0], [1.0], [2.5], [4.0], [9.0], [10.5]], method="mixture",
                        components=(1, 7), seed=5)
    reasons = [c["reason"] for c in small.selection]
    check(reasons[0] == "" and reasons[-1] == "mixture: K = 7 exceeds the number of rows (6)",
          "reason of a candidate that could not be fitted")
    check([c["reason"] for c in ellipsa.load(small.save()).selection] == reasons,
          "reasons survive the model file")
    # One blob split in two: EM creeps, so one iteration cannot meet 1e-12.
    capped = ellipsa.fit(rng.normal(size=(200, 2)), method="mixture", components=2, seed=5,
                         iterations=(1, 1e-12))
    check(capped.diagnostic("converged") == 0.0 and not capped.selection[0]["converged"],
          "a fit stopped at its iteration cap is returned, marked not converged")


def round_trip(model, rows):
    text = model.save()
    check(json.loads(text).get("format_version") is not None, "JSON with format_version")
    loaded = ellipsa.load(text)
    check(loaded.save() == text, "save -> load -> save identical text")
    a, b = model.score(rows), loaded.score(rows)
    for field in ellipsa.SCORE_FIELDS:
        check(same_bits(getattr(a, field), getattr(b, field)), "scores after reload: " + field)
    return text


def run_list_path_child():
    """Runs this script again with NumPy blocked and returns its results."""
    env = dict(os.environ, ELLIPSA_TEST_BLOCK_NUMPY="1")
    out = subprocess.run([sys.executable, os.path.abspath(__file__)], env=env,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, universal_newlines=True)
    sys.stderr.write(out.stderr)
    check(out.returncode == 0, "list path without NumPy (child exit %d)" % out.returncode)
    return json.loads(out.stdout.strip().splitlines()[-1])


def numpy_main():
    rng = np.random.default_rng(12345)
    classical, new, _ = numpy_classical(rng)
    mcd, x = numpy_mcd(rng)
    numpy_mixture(rng)
    round_trip(classical, new)
    text = round_trip(mcd, x)
    cross = os.environ.get("ELLIPSA_CROSS_DIR")
    if cross:
        os.makedirs(cross, exist_ok=True)
        with open(os.path.join(cross, "python_model.json"), "w", encoding="utf-8") as f:
            f.write(text)

    # The list path, here and in an interpreter without NumPy, must match the
    # NumPy path bit for bit (same row-major values).
    here = list_path()
    child = run_list_path_child()
    arr = np.array(list_data(11, 60, 3))
    model = ellipsa.fit(arr, method="classical")
    s = model.score(arr)
    for name, got in (("this interpreter", here), ("no NumPy", child)):
        check(got["location"] == model.location.tolist(), "list path location, " + name)
        check(got["scatter"] == model.scatter.tolist(), "list path scatter, " + name)
        check(got["d2"] == s.squared_distance.tolist(), "list path d2, " + name)
        check(got["p_value"] == s.p_value.tolist(), "list path p-values, " + name)
    check(child["text"] == here["text"], "same model file with and without NumPy")


def compare_any_path():
    """ellipsa.compare and ellipsa.shape on lists: T^2 against a pure-Python
    two-pass computation with Gaussian elimination (an independent check)."""
    a, b = list_data(21, 40, 3), list_data(22, 30, 3)
    for r in b:
        r[1] += 0.4
    got = ellipsa.compare(a, b, permutations=9, seed=1)
    p, n1, n2 = 3, len(a), len(b)
    mean = lambda x: [sum(r[j] for r in x) / len(x) for j in range(p)]
    ma, mb = mean(a), mean(b)
    s = [[0.0] * p for _ in range(p)]
    for x, m in ((a, ma), (b, mb)):
        for r in x:
            for i in range(p):
                for j in range(p):
                    s[i][j] += (r[i] - m[i]) * (r[j] - m[j]) / (n1 + n2 - 2)
    d = [mb[j] - ma[j] for j in range(p)]
    aug = [s[i][:] + [d[i]] for i in range(p)]
    for k in range(p):  # Gaussian elimination, no pivoting needed (positive definite)
        for i in range(k + 1, p):
            f = aug[i][k] / aug[k][k]
            for j in range(k, p + 1):
                aug[i][j] -= f * aug[k][j]
    w = [0.0] * p
    for i in reversed(range(p)):
        w[i] = (aug[i][p] - sum(aug[i][j] * w[j] for j in range(i + 1, p))) / aug[i][i]
    t2 = n1 * n2 / (n1 + n2) * sum(d[j] * w[j] for j in range(p))
    check(close(got["mean_shift"]["statistic"], t2, 1e-10), "compare: T^2 against pure Python")
    check(got["mean_shift"]["law"] == "F" and got["covariance_change"]["law"] == "chi-square", "compare: laws")
    check(got["robust_mean_shift"]["permutations_used"] + got["robust_mean_shift"]["permutations_failed"] == 9,
          "compare: relabellings")
    check(len(got["variables"]) == 3 and close(got["variables"][1]["batch_mean"], mb[1], 1e-12), "compare: variables")
    check(got["rows"]["batch_used"] == 30, "compare: rows")
    sh = ellipsa.shape(a)
    check(sh["rows"] == 40 and sh["kurtosis_expected"] == 15.0 and not sh["approximate"], "shape of rows")
    expect_error(lambda: ellipsa.compare(a, [r[:2] for r in b]), "ELLIPSA_ERR_SHAPE", "ellipsa_batch_compare")


def main():
    errors_any_path()
    compare_any_path()
    if np is None:
        result = list_path()
        if LISTS_ONLY:  # the parent reads the last line
            print(json.dumps(result))
            return
        print("ellipsa python smoke (lists only, no NumPy): %d checks passed" % CHECKS[0])
        return
    numpy_main()
    print("ellipsa python smoke (NumPy %s, library %s): %d checks passed"
          % (np.__version__, ellipsa.version(), CHECKS[0]))


if __name__ == "__main__":
    main()
