"""Host-neutral bridge from a spreadsheet host to ellipsa's sheet functions.

A host adapter (Gnumeric's Python plugin, LibreOffice's Python add-in, ...)
uses this module to read the function catalog that the library describes
itself, and to evaluate any catalog function on cell values:

    lib = SheetLibrary("/path/to/libellipsa.so")
    for f in lib.catalog(): register f.name with its help and arguments
    rows = lib.evaluate(f.index, [Block(cells), None, "mcd"])

It only converts values (ctypes, standard library only, no NumPy) and holds no
code per function: every computation happens in the library, through
ellipsa_sheet_result_shape() and ellipsa_sheet_evaluate() (capi/include/ellipsa.h).
"""
import ctypes
import math

# Constants copied from ellipsa.h (section "Sheet functions").
VALUE_ABSENT = 0
ARG_RANGE, ARG_NUMBER, ARG_TEXT, ARG_FLAG = 1, 2, 3, 4
KIND_NAMES = {ARG_RANGE: "range", ARG_NUMBER: "number", ARG_TEXT: "text", ARG_FLAG: "flag"}
SHAPE_SCALAR = 1
SHAPE_NAMES = {1: "one value", 2: "one per row", 3: "several per row", 4: "one per column",
               5: "p x p", 6: "table with a title row"}
INPUT_NUMBER, INPUT_TEXT, INPUT_ERROR = 0, 1, 2
CELL_EMPTY, CELL_NUMBER, CELL_TEXT, CELL_ERROR = 0, 1, 2, 3
ERROR_VALUE, ERROR_NUM, ERROR_NA = 1, 2, 3
ERROR_TEXT = {ERROR_VALUE: "#VALUE!", ERROR_NUM: "#NUM!", ERROR_NA: "#N/A"}


class Matrix(ctypes.Structure):
    _fields_ = [("data", ctypes.POINTER(ctypes.c_double)), ("rows", ctypes.c_int64),
                ("cols", ctypes.c_int64), ("row_stride", ctypes.c_int64), ("col_stride", ctypes.c_int64)]


class FunctionInfo(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_int64), ("name", ctypes.c_char_p), ("category", ctypes.c_char_p),
                ("help", ctypes.c_char_p), ("argument_count", ctypes.c_int32),
                ("required_count", ctypes.c_int32), ("result_shape", ctypes.c_int32)]


class ArgumentInfo(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_int64), ("name", ctypes.c_char_p), ("help", ctypes.c_char_p),
                ("kind", ctypes.c_int32), ("optional", ctypes.c_int32), ("default_text", ctypes.c_char_p)]


class Value(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_int64), ("kind", ctypes.c_int32), ("range", Matrix),
                ("cell_kind", ctypes.POINTER(ctypes.c_uint8)), ("number", ctypes.c_double),
                ("text", ctypes.c_char_p)]


class Cell(ctypes.Structure):
    _fields_ = [("type", ctypes.c_int32), ("error", ctypes.c_int32), ("number", ctypes.c_double),
                ("text", ctypes.c_char_p)]


class SheetFailure(Exception):
    """The whole function failed: status name and the library's message."""

    def __init__(self, status_name, message):
        super().__init__("%s: %s" % (status_name, message))
        self.status_name = status_name
        self.message = message


class CellError(object):
    """An error value inside a result (code: ERROR_VALUE, ERROR_NUM or ERROR_NA)."""
    __slots__ = ("code",)

    def __init__(self, code):
        self.code = code

    def __repr__(self):
        return ERROR_TEXT.get(self.code, "#N/A")

    def __eq__(self, other):
        return isinstance(other, CellError) and other.code == self.code


class Block(object):
    """A block of cells as a list of rows; each cell a float, None (blank),
    a str (text) or a CellError / ERROR marker (an error value of the host)."""
    __slots__ = ("rows",)

    def __init__(self, rows):
        self.rows = rows


ERROR = CellError(ERROR_NA)  # what a host passes for an error cell of any kind


class Argument(object):
    def __init__(self, info):
        self.name = info.name.decode()
        self.help = info.help.decode()
        self.kind = info.kind
        self.optional = bool(info.optional)
        self.default = info.default_text.decode()


class Function(object):
    def __init__(self, index, info, arguments):
        self.index = index
        self.name = info.name.decode()
        self.category = info.category.decode()
        self.help = info.help.decode()
        self.shape = info.result_shape
        self.required = info.required_count
        self.arguments = arguments


class SheetLibrary(object):
    """The ellipsa shared library, seen through its sheet-function catalog."""

    def __init__(self, path, cache_entries=64, cache_bytes=256 << 20):
        self.path = path
        lib = ctypes.CDLL(path)
        self._lib = lib
        i32, i64, st = ctypes.c_int32, ctypes.c_int64, ctypes.c_int32
        lib.ellipsa_last_error.restype = ctypes.c_char_p
        lib.ellipsa_status_string.restype = ctypes.c_char_p
        lib.ellipsa_status_string.argtypes = [st]
        lib.ellipsa_version.restype = ctypes.c_char_p
        lib.ellipsa_sheet_function_count.argtypes = [ctypes.POINTER(i32)]
        lib.ellipsa_sheet_function_describe.argtypes = [ctypes.POINTER(FunctionInfo), i32]
        lib.ellipsa_sheet_argument_describe.argtypes = [ctypes.POINTER(ArgumentInfo), i32, i32]
        lib.ellipsa_sheet_cache_create.argtypes = [ctypes.POINTER(ctypes.c_void_p), i64, i64]
        lib.ellipsa_sheet_cache_destroy.argtypes = [ctypes.c_void_p]
        lib.ellipsa_sheet_cache_destroy.restype = None
        lib.ellipsa_sheet_cache_stats.argtypes = [ctypes.POINTER(i64)] * 4 + [ctypes.c_void_p]
        lib.ellipsa_sheet_result_shape.argtypes = [ctypes.POINTER(i64), ctypes.POINTER(i64), i32,
                                                   ctypes.POINTER(Value), i32]
        lib.ellipsa_sheet_evaluate.argtypes = [ctypes.POINTER(Cell), i64, i64, ctypes.c_void_p, i32,
                                               ctypes.POINTER(Value), i32]
        for f in ("function_count", "function_describe", "argument_describe", "cache_create",
                  "cache_stats", "result_shape", "evaluate"):
            getattr(lib, "ellipsa_sheet_" + f).restype = st
        cache = ctypes.c_void_p()
        self._check(lib.ellipsa_sheet_cache_create(ctypes.byref(cache), cache_entries, cache_bytes))
        self._cache = cache
        self._catalog = None

    def version(self):
        return self._lib.ellipsa_version().decode()

    def _check(self, status):
        if status != 0:
            raise SheetFailure(self._lib.ellipsa_status_string(status).decode(),
                               self._lib.ellipsa_last_error().decode("utf-8", "replace"))

    def catalog(self):
        """Every catalog function, in catalog order."""
        if self._catalog is None:
            count = ctypes.c_int32()
            self._check(self._lib.ellipsa_sheet_function_count(ctypes.byref(count)))
            out = []
            for i in range(count.value):
                info = FunctionInfo()
                info.struct_size = ctypes.sizeof(FunctionInfo)
                self._check(self._lib.ellipsa_sheet_function_describe(ctypes.byref(info), i))
                args = []
                for a in range(info.argument_count):
                    ai = ArgumentInfo()
                    ai.struct_size = ctypes.sizeof(ArgumentInfo)
                    self._check(self._lib.ellipsa_sheet_argument_describe(ctypes.byref(ai), i, a))
                    args.append(Argument(ai))
                out.append(Function(i, info, args))
            self._catalog = out
        return self._catalog

    def cache_stats(self):
        v = [ctypes.c_int64() for _ in range(4)]
        self._check(self._lib.ellipsa_sheet_cache_stats(*[ctypes.byref(x) for x in v], self._cache))
        return dict(zip(("hits", "misses", "entries", "bytes"), (x.value for x in v)))

    def evaluate(self, index, values):
        """Evaluates catalog function `index` on host values (None, float, bool,
        str or Block, in catalog order; trailing ones may be left out).
        Returns a list of rows of cells: float, str, None (empty) or CellError.
        Raises SheetFailure when the whole function fails."""
        keep = []  # buffers that must outlive the call
        n = len(values)
        args = (Value * max(n, 1))()
        for i, v in enumerate(values):
            args[i].struct_size = ctypes.sizeof(Value)
            _to_value(args[i], v, keep)
        rows, cols = ctypes.c_int64(), ctypes.c_int64()
        self._check(self._lib.ellipsa_sheet_result_shape(ctypes.byref(rows), ctypes.byref(cols), index,
                                                         args, n))
        r, c = rows.value, cols.value
        cells = (Cell * max(r * c, 1))()
        self._check(self._lib.ellipsa_sheet_evaluate(cells, r, c, self._cache, index, args, n))
        out = []
        for i in range(r):
            row = []
            for j in range(c):
                cell = cells[i * c + j]
                if cell.type == CELL_NUMBER:
                    row.append(cell.number)
                elif cell.type == CELL_TEXT:
                    row.append(cell.text.decode())
                elif cell.type == CELL_ERROR:
                    row.append(CellError(cell.error))
                else:
                    row.append(None)
            out.append(row)
        return out

    def close(self):
        if self._cache:
            self._lib.ellipsa_sheet_cache_destroy(self._cache)
            self._cache = None


def catalog_records(lib):
    """The catalog as plain records (names, help, arguments), for the files a
    host needs at build time (plugin.xml, IDL) and to explain a missing library."""
    out = []
    for f in lib.catalog():
        out.append({
            "name": f.name, "category": f.category, "help": f.help, "required": f.required, "shape": f.shape,
            "shape_text": SHAPE_NAMES.get(f.shape, "an array"),
            "arguments": [{"name": a.name, "help": a.help, "kind": a.kind, "optional": a.optional,
                           "default": a.default} for a in f.arguments]})
    return out


def _to_value(out, v, keep):
    if v is None:
        out.kind = VALUE_ABSENT
    elif isinstance(v, Block):
        rows = v.rows
        n = len(rows)
        p = max((len(r) for r in rows), default=0)
        data = (ctypes.c_double * max(n * p, 1))()
        kinds = (ctypes.c_uint8 * max(n * p, 1))()
        nan = float("nan")
        for i, row in enumerate(rows):
            for j in range(p):
                x = row[j] if j < len(row) else None
                k = i * p + j
                if isinstance(x, (int, float)) and not isinstance(x, bool):
                    data[k] = float(x)
                elif x is None:
                    data[k] = nan
                elif isinstance(x, CellError):
                    data[k] = nan
                    kinds[k] = INPUT_ERROR
                else:  # text, or TRUE/FALSE: not a reading
                    data[k] = nan
                    kinds[k] = INPUT_TEXT
        keep.extend((data, kinds))
        out.kind = ARG_RANGE
        out.range = Matrix(ctypes.cast(data, ctypes.POINTER(ctypes.c_double)), n, p, p, 1)
        out.cell_kind = ctypes.cast(kinds, ctypes.POINTER(ctypes.c_uint8))
    elif isinstance(v, bool):
        out.kind = ARG_FLAG
        out.number = 1.0 if v else 0.0
    elif isinstance(v, (int, float)):
        out.kind = ARG_NUMBER
        out.number = float(v)
    else:
        b = str(v).encode("utf-8")
        keep.append(b)
        out.kind = ARG_TEXT
        out.text = b


def is_number(x):
    return isinstance(x, float) and not math.isnan(x)
