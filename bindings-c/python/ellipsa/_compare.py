"""Batch comparison and shape checks: ellipsa_batch_compare and
ellipsa_data_shape / ellipsa_model_shape of the C interface, as plain dicts.

The p-values are statistical evidence about a process, not a release decision
for parts or a judgement of people.
"""
import ctypes as _c

from . import _lib
from ._lib import check, lib
from ._matrix import to_view

TESTS = {"mean_shift": 1, "robust_mean_shift": 2, "covariance_change": 3}
LAWS = {1: "F", 2: "chi-square", 3: "permutation"}


def _as_dict(struct):
    return {name: getattr(struct, name) for name, _ in struct._fields_ if name != "struct_size"}


def compare(reference, batch, robust=True, permutations=199, seed=0, alpha=0.75, progress=None):
    """Compares a new batch with a reference batch of the same columns.

    Args:
        reference, batch: rows x columns, as fit() accepts (same column order).
        robust: also run the robust mean test (DetMCD T^2, permutation p-value).
        permutations: random relabellings behind the robust p-value (0: none, p NaN).
        seed: seed of the relabellings.
        alpha: DetMCD subset fraction in [0.5, 1].
        progress: callable(stage, fraction); an exception it raises cancels.

    Returns:
        dict with "rows" (used and dropped per batch), one entry per test
        ("mean_shift", "robust_mean_shift" when run, "covariance_change"): a
        dict of the statistic, its transformation, df, p_value and "law", or
        {"available": False, "reason": ...} when the test could not be
        computed; and "variables": one dict per column (means, sds,
        shift_in_sd, Welch t, df, p_value, p_holm).
    """
    ref, new = to_view(reference), to_view(batch)
    options = _lib.CompareOptions()
    options.struct_size = _c.sizeof(_lib.CompareOptions)
    options.robust = 1 if robust else 0
    options.permutations = int(permutations)
    options.seed = int(seed)
    options.alpha = float(alpha)
    raised, callback = [], None
    if progress is not None:
        from ._model import _progress_trampoline
        callback = _progress_trampoline(progress, raised)  # kept alive during the call
        options.progress = callback
    handle = _c.c_void_p()
    status = lib.ellipsa_batch_compare(_c.byref(handle), _c.byref(ref.matrix), _c.byref(new.matrix),
                                       _c.byref(options))
    if raised:
        raise raised[0]
    check(status)
    try:
        out = {}
        used = [_c.c_int64() for _ in range(4)]
        check(lib.ellipsa_comparison_rows(*[_c.byref(u) for u in used], handle))
        out["rows"] = {"reference_used": used[0].value, "reference_dropped": used[1].value,
                       "batch_used": used[2].value, "batch_dropped": used[3].value}
        for name, code in TESTS.items():
            r = _lib.TestResult()
            r.struct_size = _c.sizeof(_lib.TestResult)
            s = lib.ellipsa_comparison_test(_c.byref(r), handle, code)
            if s == _lib.ERR_STATE:
                continue  # not requested
            if s != _lib.OK:
                out[name] = {"available": False, "status": _lib.status_name(s),
                             "reason": _lib._text(lib.ellipsa_last_error())}
                continue
            d = _as_dict(r)
            d["law"] = LAWS.get(d["law"], d["law"])
            d["available"] = True
            out[name] = d
        count = _c.c_int64()
        check(lib.ellipsa_comparison_variables(None, 0, _c.byref(count), handle))
        arr = (_lib.VariableShift * count.value)()
        for v in arr:
            v.struct_size = _c.sizeof(_lib.VariableShift)
        check(lib.ellipsa_comparison_variables(arr, count.value, _c.byref(count), handle))
        out["variables"] = [_as_dict(v) for v in arr]
        return out
    finally:
        lib.ellipsa_comparison_destroy(handle)


def _shape(call):
    s = _lib.ShapeTest()
    s.struct_size = _c.sizeof(_lib.ShapeTest)
    check(call(_c.byref(s)))
    d = _as_dict(s)
    d["approximate"] = bool(d["approximate"])
    return d


def shape(data):
    """Mardia's (1970) multivariate skewness and kurtosis of the complete rows
    of data, with p-values from their large-sample laws."""
    view = to_view(data)
    return _shape(lambda out: lib.ellipsa_data_shape(out, _c.byref(view.matrix)))


def model_shape(model, data):
    """Mardia's check of the rows a Gaussian model was fitted on (data: the
    fitting data). For the MCD family the rows the final estimate used, with
    approximate limits (see ellipsa_model_shape in ellipsa.h)."""
    view = to_view(data)
    return _shape(lambda out: lib.ellipsa_model_shape(out, model._h(), _c.byref(view.matrix)))


__all__ = ["compare", "shape", "model_shape", "TESTS"]
