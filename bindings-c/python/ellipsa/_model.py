"""Model, Scores, fit() and load(): Pythonic names over ellipsa_model_* calls.

Every number comes from the library; this module only moves buffers.
"""
import ctypes
import numbers

from . import _lib
from ._buffers import Buffer
from ._lib import check, lib
from ._matrix import to_view

_c = ctypes


def _method_code(method):
    if isinstance(method, numbers.Integral):
        return int(method)
    code = _c.c_int32()
    check(lib.ellipsa_method_from_name(_c.byref(code), str(method).encode("utf-8")))
    return code.value


def _named_code(from_name, value):
    # Names are the library's own (ellipsa_structure_from_name, ...); an
    # unknown one is a ValueError with the library's message.
    if isinstance(value, numbers.Integral):
        return int(value)
    code = _c.c_int32()
    if from_name(_c.byref(code), str(value).lower().encode("utf-8")) != 0:
        raise ValueError(_lib._text(lib.ellipsa_last_error()))
    return code.value


def _lookup(table, value, what):
    if isinstance(value, numbers.Integral):
        return int(value)
    try:
        return table[str(value).lower()]
    except KeyError:
        raise ValueError("ellipsa: unknown %s %r; one of %s" % (what, value, ", ".join(sorted(table))))


def _set_options(options, p, columns, alpha, seed, components, structure, restarts, divisor,
                 missing, iterations, regularisation):
    if columns is not None:
        names = [str(c).encode("utf-8") for c in columns]
        array = (_c.c_char_p * len(names))(*names)
        check(lib.ellipsa_fit_options_set_column_names(options, array, len(names)))
    if alpha is not None:
        check(lib.ellipsa_fit_options_set_alpha(options, float(alpha)))
    if seed is not None:
        check(lib.ellipsa_fit_options_set_seed(options, int(seed)))
    if components is not None:
        kmin, kmax = (components, components) if isinstance(components, numbers.Integral) else components
        check(lib.ellipsa_fit_options_set_components(options, int(kmin), int(kmax)))
    if structure is not None:
        check(lib.ellipsa_fit_options_set_structure(options, _named_code(lib.ellipsa_structure_from_name,
                                                                         structure)))
    if restarts is not None:
        check(lib.ellipsa_fit_options_set_restarts(options, int(restarts)))
    if divisor is not None:
        check(lib.ellipsa_fit_options_set_divisor(options, _lookup(_lib.DIVISORS, divisor, "divisor")))
    if missing is not None:
        check(lib.ellipsa_fit_options_set_missing(options, _named_code(lib.ellipsa_missing_from_name,
                                                                       missing)))
    if iterations is not None:
        cap, tolerance = (iterations, 1e-6) if isinstance(iterations, numbers.Integral) else iterations
        check(lib.ellipsa_fit_options_set_iterations(options, int(cap), float(tolerance)))
    if regularisation is not None:
        check(lib.ellipsa_fit_options_set_regularisation(options, float(regularisation)))


def _default_columns(data, p):
    # pandas-like frames carry their column labels.
    labels = getattr(data, "columns", None)
    if labels is not None and not isinstance(data, (list, tuple)):
        labels = [str(c) for c in labels]
        if len(labels) == p:
            return labels
    return None


def _progress_trampoline(progress, raised):
    """Wraps a Python callable as an ellipsa_progress_fn. An exception raised
    by the callable cancels the fit and is re-raised by fit()."""
    def call(stage, fraction, _user):
        try:
            progress(_lib._text(stage), fraction)
            return 0
        except BaseException as exc:  # KeyboardInterrupt too: stop the fit
            raised.append(exc)
            return 1
    return _lib.PROGRESS_FN(call)


def fit(data, method="mcd", columns=None, alpha=None, seed=None, components=None, structure=None,
        restarts=None, divisor=None, missing=None, iterations=None, regularisation=None,
        progress=None):
    """Fits a model to the rows of `data` (rows = observations, columns = variables).

    Args:
        data: a 2-D NumPy array (float64 arrays in any layout, including
            Fortran order and strided slices, are read in place; other dtypes,
            negative strides or misaligned buffers are converted once), any
            object numpy.asarray accepts, or a list of rows (copied; None or
            NaN = missing).
        method: "classical", "ledoit-wolf", "oas", "mcd", "detmcd", "mrcd"
            or "mixture".
        columns: column names (default: the frame's labels, else x1, x2, ...).
        alpha: MCD family: fraction in [0.5, 1] that sets h.
        seed: seed for FAST-MCD and mixtures (unsigned 64-bit).
        components: mixtures: K, or (kmin, kmax) to choose K by BIC.
        structure: mixtures: "full", "diagonal", "tied", "spherical" or "all".
        restarts: mixtures: EM runs from different starts.
        divisor: classical: "n" or "n-1" (default).
        missing: rows with NaN: "drop" (default), "refuse", or "em" (mixtures).
        iterations: iteration cap, or (cap, relative tolerance).
        regularisation: mixtures: relative ridge on covariance diagonals.
        progress: callable(stage, fraction) called during long fits; an
            exception it raises cancels the fit and propagates.

    Returns:
        Model. Raises Error when the library refuses (e.g. status
        "ELLIPSA_ERR_DATA" for too few rows, "ELLIPSA_NUM_SINGULAR").
    """
    view = to_view(data)
    if columns is None:
        columns = _default_columns(data, view.cols)
    options = _c.c_void_p()
    check(lib.ellipsa_fit_options_create(_c.byref(options), _method_code(method)))
    try:
        _set_options(options, view.cols, columns, alpha, seed, components, structure, restarts,
                     divisor, missing, iterations, regularisation)
        raised, callback = [], None
        if progress is not None:
            callback = _progress_trampoline(progress, raised)  # kept alive until fit returns
            check(lib.ellipsa_fit_options_set_progress(options, callback, None))
        handle = _c.c_void_p()
        status = lib.ellipsa_model_fit(_c.byref(handle), _c.byref(view.matrix), options)
        if raised:
            lib.ellipsa_model_destroy(handle)  # NULL after a cancelled fit; harmless
            raise raised[0]
        check(status)
    finally:
        lib.ellipsa_fit_options_destroy(options)
    return Model(handle)


def load(text):
    """Reads a model from the JSON text of Model.save() (str or bytes)."""
    raw = text.encode("utf-8") if isinstance(text, str) else bytes(text)
    handle = _c.c_void_p()
    check(lib.ellipsa_model_load(_c.byref(handle), raw, len(raw)))
    return Model(handle)


SCORE_FIELDS = ("squared_distance", "p_value", "flag", "observed", "contribution",
                "conditional_drop", "component", "membership", "log_density", "low_density")


class Scores(object):
    """Per-row results of Model.score(); a field not requested is None.

    squared_distance [n]: squared Mahalanobis distance (mixtures: to the most
        probable component); NaN when nothing is observed.
    p_value [n]: chi-square upper-tail probability with `observed` df.
    flag [n]: 1 flagged at the level, 0 not, -1 not scorable.
    observed [n]: coordinates observed (degrees of freedom used).
    contribution [n x p]: per-variable terms summing to the distance.
    conditional_drop [n x p]: decrease of the distance when variable j is left out.
    component [n]: most probable component (0 for a Gaussian model).
    membership [n x K]: posterior probabilities (1 for a Gaussian model).
    log_density [n]: log-density of the observed coordinates.
    low_density [n]: mixtures: 1 below the model's log-density cutoff
        (Gaussian: same as flag).
    """

    def __init__(self, values, level):
        self.level = level
        for name in SCORE_FIELDS:
            setattr(self, name, values.get(name))

    def __repr__(self):
        n = len(self.squared_distance) if self.squared_distance is not None else "?"
        return "<ellipsa.Scores rows=%s level=%g>" % (n, self.level)


class Model(object):
    """A fitted (or loaded) model. Read-only; frees its handle on close(),
    at the end of a `with` block, or when garbage-collected."""

    def __init__(self, handle):
        self._handle = handle
        kind, method = _c.c_int32(), _c.c_int32()
        dimension, count = _c.c_int64(), _c.c_int32()
        check(lib.ellipsa_model_describe(_c.byref(kind), _c.byref(method), _c.byref(dimension),
                                         _c.byref(count), handle))
        self._kind = kind.value
        self._method = method.value
        self._dimension = dimension.value
        self._count = count.value

    # -- lifetime ----------------------------------------------------------
    def close(self):
        """Destroys the model handle; the object is unusable afterwards."""
        handle, self._handle = getattr(self, "_handle", None), None
        if handle is not None and lib is not None:
            lib.ellipsa_model_destroy(handle)

    def __del__(self):
        try:
            self.close()
        except Exception:  # interpreter shutdown: nothing sensible to do
            pass

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False

    def _h(self):
        if self._handle is None:
            raise ValueError("ellipsa: the model was closed")
        return self._handle

    # -- description -------------------------------------------------------
    @property
    def kind(self):
        """"gaussian" (one location and scatter) or "mixture"."""
        return "mixture" if self._kind == _lib.KIND_MIXTURE else "gaussian"

    @property
    def method(self):
        return _lib._text(lib.ellipsa_method_name(self._method))

    @property
    def dimension(self):
        return self._dimension

    @property
    def n_components(self):
        return self._count

    @property
    def columns(self):
        names = []
        for j in range(self._dimension):
            out = _c.c_char_p()
            check(lib.ellipsa_model_column_name(_c.byref(out), self._h(), j))
            names.append(_lib._text(out.value))
        return names

    def _rows(self):
        used, dropped = _c.c_int64(), _c.c_int64()
        check(lib.ellipsa_model_rows(_c.byref(used), _c.byref(dropped), self._h()))
        return used.value, dropped.value

    @property
    def rows_used(self):
        return self._rows()[0]

    @property
    def rows_dropped(self):
        return self._rows()[1]

    # -- estimates ---------------------------------------------------------
    def _component(self, k):
        p = self._dimension
        location, scatter, weight = Buffer("f8", (p,)), Buffer("f8", (p, p)), _c.c_double()
        check(lib.ellipsa_model_component(location.ptr, p, scatter.ptr, p * p, _c.byref(weight),
                                          self._h(), k))
        return weight.value, location.result(), scatter.result()

    @property
    def components(self):
        """List of (weight, location, scatter), one per component."""
        return [self._component(k) for k in range(self._count)]

    def _single(self):
        if self._kind == _lib.KIND_MIXTURE:
            raise ValueError("ellipsa: a mixture has one location per component; use .components")
        return self._component(0)

    @property
    def location(self):
        """Location (p values) of a Gaussian model (MCD family: reweighted)."""
        return self._single()[1]

    @property
    def scatter(self):
        """Scatter (p x p) of a Gaussian model (MCD family: reweighted)."""
        return self._single()[2]

    def _raw(self):
        p = self._dimension
        location, scatter = Buffer("f8", (p,)), Buffer("f8", (p, p))
        check(lib.ellipsa_model_raw_estimate(location.ptr, p, scatter.ptr, p * p, self._h()))
        return location.result(), scatter.result()

    @property
    def raw_location(self):
        """MCD family: the raw (unreweighted) location; Error otherwise."""
        return self._raw()[0]

    @property
    def raw_scatter(self):
        """MCD family: the raw (unreweighted, consistency-corrected) scatter."""
        return self._raw()[1]

    def diagnostic(self, name):
        """A named number of the fit, e.g. "h", "log_det", "bic" (see ellipsa.h)."""
        out = _c.c_double()
        check(lib.ellipsa_model_diagnostic(_c.byref(out), self._h(), name.encode("utf-8")))
        return out.value

    def _row_set(self, which):
        count = _c.c_int64()
        code = _lib.ROW_SETS[which]
        check(lib.ellipsa_model_row_set(None, 0, _c.byref(count), self._h(), code))
        out = Buffer("i8", (count.value,))
        check(lib.ellipsa_model_row_set(out.ptr, count.value, _c.byref(count), self._h(), code))
        return out.result()

    @property
    def h_subset(self):
        """MCD family: 0-based rows of the final h-subset."""
        return self._row_set("h_subset")

    @property
    def outliers(self):
        """MCD family: 0-based rows flagged by the reweighting rule."""
        return self._row_set("outliers")

    @property
    def dropped_rows(self):
        """0-based rows dropped for missing values."""
        return self._row_set("dropped")

    @property
    def selection(self):
        """Mixtures: the model-choice table, one dict per candidate tried.

        "converged" is False for a candidate whose EM stopped at its iteration
        cap (still a fit) or that could not be fitted; "reason" says why a
        candidate could not be fitted ("" when it was).
        """
        count = _c.c_int64()
        check(lib.ellipsa_model_selection(None, 0, _c.byref(count), self._h()))
        table = (_lib.Candidate * max(count.value, 1))()
        for entry in table:
            entry.struct_size = _c.sizeof(_lib.Candidate)
        check(lib.ellipsa_model_selection(table, count.value, _c.byref(count), self._h()))
        return [{
            "components": e.components,
            "structure": _lib._text(lib.ellipsa_structure_name(e.structure)),
            "log_likelihood": e.log_likelihood,
            "parameters": e.parameters,
            "bic": e.bic,
            "icl": e.icl,
            "converged": bool(e.converged),
            "chosen": bool(e.chosen),
            "reason": self._candidate_reason(i),
        } for i, e in enumerate(table[:count.value])]

    def _candidate_reason(self, index):
        reason = _c.c_char_p()
        check(lib.ellipsa_candidate_explain(_c.byref(reason), self._h(), index))
        return reason.value.decode("utf-8") if reason.value else ""

    # -- scoring and files -------------------------------------------------
    def score(self, data, level=0.975, fields=None):
        """Scores the rows of `data` (same columns, same order as the fit).

        `data` is taken like fit() takes it. `fields` limits the work to the
        named Scores fields (default: all). Returns Scores.
        """
        wanted = SCORE_FIELDS if fields is None else tuple(fields)
        unknown = [f for f in wanted if f not in SCORE_FIELDS]
        if unknown:
            raise ValueError("ellipsa: unknown score fields %s" % ", ".join(unknown))
        view = to_view(data)
        n, p, k = view.rows, self._dimension, self._count
        shapes = {"contribution": (n, p), "conditional_drop": (n, p), "membership": (n, k)}
        integer = ("flag", "observed", "component", "low_density")
        buffers = {f: Buffer("i4" if f in integer else "f8", shapes.get(f, (n,))) for f in wanted}
        out = _lib.ScoresBuffers()
        out.struct_size = _c.sizeof(_lib.ScoresBuffers)
        for name, buffer in buffers.items():
            setattr(out, name, buffer.ptr)
        check(lib.ellipsa_model_score(_c.byref(out), self._h(), _c.byref(view.matrix), float(level)))
        return Scores({f: b.result() for f, b in buffers.items()}, level)

    def save(self):
        """The model as JSON text (str); load() reads it back identically."""
        text, length = _c.c_void_p(), _c.c_int64()
        check(lib.ellipsa_model_save(_c.byref(text), _c.byref(length), self._h()))
        try:
            return _c.string_at(text.value, length.value).decode("utf-8")
        finally:
            lib.ellipsa_text_free(text)

    def __repr__(self):
        if self._handle is None:
            return "<ellipsa.Model closed>"
        return "<ellipsa.Model %s %s p=%d components=%d>" % (self.kind, self.method,
                                                             self._dimension, self._count)
