"""Result buffers: NumPy arrays when NumPy is present, else ctypes arrays read
back into lists. The library writes straight into them (no extra copy with
NumPy)."""
import ctypes

from . import _matrix

_np = _matrix._np
_settings = {"numpy": _np is not None}


def set_output(kind):
    """Chooses the type of returned arrays: "numpy" or "lists"."""
    if kind == "numpy":
        if _np is None:
            raise ValueError("ellipsa: NumPy is not available")
        _settings["numpy"] = True
    elif kind == "lists":
        _settings["numpy"] = False
    else:
        raise ValueError('ellipsa: output must be "numpy" or "lists"')


def output_kind():
    return "numpy" if _settings["numpy"] else "lists"


class Buffer(object):
    """A caller-owned output buffer of `shape` (1-D or 2-D, row-major)."""

    _CTYPES = {"f8": ctypes.c_double, "i4": ctypes.c_int32, "i8": ctypes.c_int64}

    def __init__(self, code, shape):
        self.shape = tuple(int(s) for s in shape)
        self.size = 1
        for s in self.shape:
            self.size *= s
        ctype = self._CTYPES[code]
        self._numpy = _settings["numpy"]
        if self._numpy:
            self._array = _np.empty(self.shape, dtype=code)
            self.ptr = self._array.ctypes.data_as(ctypes.POINTER(ctype))
        else:
            self._array = (ctype * max(self.size, 1))()
            self.ptr = ctypes.cast(self._array, ctypes.POINTER(ctype))

    def result(self):
        if self._numpy:
            return self._array
        flat = list(self._array[:self.size])
        if len(self.shape) == 2:
            cols = self.shape[1]
            return [flat[i * cols:(i + 1) * cols] for i in range(self.shape[0])]
        return flat
