"""Turns Python 2-D data into an ellipsa_matrix view, without copying when it can.

The C interface reads element (i, j) at data[i*row_stride + j*col_stride] with
strides in elements, so a NumPy array of float64 whose byte strides are
non-negative multiples of 8 and whose address is 8-byte aligned is passed in
place: C order, Fortran order, slices such as a[::2, 1:4] and broadcast
(stride 0) views alike. Anything else is converted once.
"""
import ctypes
import math

from ._lib import Matrix

try:  # NumPy is optional: lists of lists work without it.
    import numpy as _np
except ImportError:  # pragma: no cover - depends on the interpreter
    _np = None

HAVE_NUMPY = _np is not None
_DOUBLE = ctypes.sizeof(ctypes.c_double)


class View(object):
    """An ellipsa_matrix together with the object that owns its memory.

    Keep the View alive for as long as the C call that reads it runs.
    """

    def __init__(self, matrix, owner, copied):
        self.matrix = matrix
        self.owner = owner
        self.copied = copied  # True when the data had to be converted

    @property
    def rows(self):
        return self.matrix.rows

    @property
    def cols(self):
        return self.matrix.cols


def _is_sequence_of_rows(data):
    return isinstance(data, (list, tuple))


def _numpy_view(data):
    array = _np.asarray(data)
    if array.ndim == 1:  # one row
        array = array.reshape(1, -1)
    if array.ndim != 2:
        raise ValueError("ellipsa: data must be 2-D (rows x columns), got %d dimensions" % array.ndim)
    copied = False
    usable = (array.dtype == _np.float64 and array.dtype.isnative and
              all(s >= 0 and s % _DOUBLE == 0 for s in array.strides) and
              array.ctypes.data % _DOUBLE == 0)
    if not usable:
        # Other dtypes, byte-swapped data, negative strides (a[::-1]) and
        # misaligned buffers: one C-order float64 copy.
        array = _np.ascontiguousarray(array, dtype=_np.float64)
        copied = True
    rows, cols = array.shape
    matrix = Matrix()
    matrix.data = ctypes.cast(ctypes.c_void_p(array.ctypes.data), ctypes.POINTER(ctypes.c_double))
    matrix.rows = rows
    matrix.cols = cols
    matrix.row_stride = array.strides[0] // _DOUBLE
    matrix.col_stride = array.strides[1] // _DOUBLE
    return View(matrix, array, copied)


def _as_float(value):
    if value is None:
        return math.nan  # missing
    return float(value)


def list_view(rows):
    """The list path: copies a list of rows (lists of numbers, None = missing)
    into a row-major ctypes array. A flat list of numbers is one row."""
    rows = list(rows)
    if rows and not isinstance(rows[0], (list, tuple)):
        rows = [rows]
    n = len(rows)
    p = len(rows[0]) if n else 0
    buffer = (ctypes.c_double * max(n * p, 1))()
    for i, row in enumerate(rows):
        if not isinstance(row, (list, tuple)) or len(row) != p:
            raise ValueError("ellipsa: row %d has %s values, row 0 has %d" %
                             (i, len(row) if isinstance(row, (list, tuple)) else "no list of", p))
        base = i * p
        for j, value in enumerate(row):
            buffer[base + j] = _as_float(value)
    matrix = Matrix()
    matrix.data = ctypes.cast(buffer, ctypes.POINTER(ctypes.c_double))
    matrix.rows = n
    matrix.cols = p
    matrix.row_stride = p
    matrix.col_stride = 1
    return View(matrix, buffer, True)


def to_view(data):
    """An ellipsa_matrix view of data.

    Lists and tuples of rows take the list path (copied); anything else goes
    through NumPy (numpy.asarray) and is read in place when it is float64 with
    element-aligned, non-negative strides.
    """
    if _is_sequence_of_rows(data):
        return list_view(data)
    if _np is None:
        raise TypeError("ellipsa: without NumPy, data must be a list of rows, got %s" %
                        type(data).__name__)
    return _numpy_view(data)
