"""ellipsa for Python: a thin ctypes binding of the ellipsa C interface.

    import ellipsa
    model = ellipsa.fit(data, method="mcd", seed=1)
    scores = model.score(new_rows, level=0.975)
    text = model.save(); same = ellipsa.load(text)
    moved = ellipsa.compare(reference_rows, new_rows)   # has the process moved?

Results are statistical evidence (distances, probabilities, flags at a chosen
level), not verdicts about any row.

The shared library is found through the environment variable ELLIPSA_LIBRARY
(full path), else, in a source checkout, build/lib/libellipsa.so of that tree,
else the system's dynamic loader by soname (libellipsa.so.0: LD_LIBRARY_PATH,
the ld.so cache, the default folders). library_path() tells which file was
loaded. NumPy is optional: without it, pass lists of rows and get lists back.
"""
import ctypes as _ctypes

from ._version import __version__
from ._lib import Error, lib as _clib, check as _check, status_name, library_path
from ._matrix import HAVE_NUMPY
from ._buffers import set_output, output_kind
from ._model import Model, Scores, SCORE_FIELDS, fit, load
from ._compare import compare, shape, model_shape

__all__ = ["__version__", "library_path", "Error", "Model", "Scores", "SCORE_FIELDS", "fit", "load", "version", "status_name",
           "chi2_quantile", "chi2_tail", "f_quantile", "f_tail", "beta_quantile", "beta_tail",
           "hotelling_limit", "set_output", "output_kind", "HAVE_NUMPY", "compare", "shape", "model_shape"]


def version():
    """Version of the loaded library, "MAJOR.MINOR.PATCH"."""
    return _clib.ellipsa_version().decode("ascii")


def _scalar(function, *args):
    out = _ctypes.c_double()
    _check(function(_ctypes.byref(out), *[float(a) for a in args]))
    return out.value


def chi2_quantile(probability, df):
    """x with P(X <= x) = probability for X ~ chi-square(df)."""
    return _scalar(_clib.ellipsa_chi2_quantile, probability, df)


def chi2_tail(x, df):
    """P(X > x) for X ~ chi-square(df), accurate far below 1e-16."""
    return _scalar(_clib.ellipsa_chi2_tail, x, df)


def f_quantile(probability, df1, df2):
    """Quantile of the F(df1, df2) distribution."""
    return _scalar(_clib.ellipsa_f_quantile, probability, df1, df2)


def f_tail(x, df1, df2):
    """P(X > x) for X ~ F(df1, df2)."""
    return _scalar(_clib.ellipsa_f_tail, x, df1, df2)


def beta_quantile(probability, a, b):
    """Quantile of the Beta(a, b) distribution."""
    return _scalar(_clib.ellipsa_beta_quantile, probability, a, b)


def beta_tail(x, a, b):
    """P(X > x) for X ~ Beta(a, b)."""
    return _scalar(_clib.ellipsa_beta_tail, x, a, b)


def hotelling_limit(phase, m, p, alpha):
    """Upper control limit for Hotelling T^2 of individual observations
    (Tracy, Young & Mason 1992); phase 1 or 2 ("I"/"II"), m reference rows,
    p variables, false-alarm probability alpha per row."""
    from ._lib import PHASES
    try:
        code = PHASES[phase]
    except KeyError:
        raise ValueError("ellipsa: phase must be 1, 2, 'I' or 'II'")
    out = _ctypes.c_double()
    _check(_clib.ellipsa_hotelling_limit(_ctypes.byref(out), code, int(m), int(p), float(alpha)))
    return out.value
