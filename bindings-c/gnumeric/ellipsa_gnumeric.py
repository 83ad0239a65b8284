"""Gnumeric plugin module for ellipsa's sheet functions.

Gnumeric's Python loader runs this file as __main__ inside the host and reads
the dict `ellipsa_functions` (service id "ellipsa" in plugin.xml). Every entry
is made from the library's own function catalog (ellipsa_sheet_* in
ellipsa.h) through the host-neutral bridge ellipsa_sheet.py: there is no code
per function here, only the conversion between Gnumeric's values and the
bridge's.

Host facts this relies on (../shared notes, measured on Gnumeric 1.12.55):
- A range argument arrives as an opaque object that must not be inspected
  (isinstance, repr and attribute access can crash the host); only `type(x) is`
  checks are safe, and the cells are read through the sheet's own TRANSPOSE.
- Error cells arrive as None, like blanks; COUNTA tells them apart.
- An error value can be raised for a one-cell result; inside an array result
  a NaN shows as #NUM!, the only error value an array can hold here.
- Argument kinds: 'A' passes a range (a blank cell as a 1 x 1 range, an
  empty argument as 0); 'E' passes a scalar (blank or empty as None). The
  kinds '?' and 'S' drop every argument after a blank one, and '?' crashes
  the host when given a blank cell.
- A raised GnumericError shows as an error value only when the class is also
  set on the Gnumeric module of the calling interpreter.
- Deactivating a Python plugin at exit crashes ssconvert; holding a reference
  on the plugin keeps it active.
"""
import ctypes
import json
import os
import sys

try:
    import Gnumeric  # present only inside the host
except ImportError:
    Gnumeric = None

PLUGIN_ID = "ellipsa_sheet_functions"
SERVICE_ID = "ellipsa"
ERROR_PREFIX = "#ELLIPSA: "


def _goffice_plugin_dir():
    """The plugin's folder as goffice knows it; also pins the plugin (see above)."""
    try:
        g = ctypes.CDLL("libgoffice-0.10.so.10")
    except OSError:
        return None
    g.go_plugins_get_plugin_by_id.restype = ctypes.c_void_p
    g.go_plugins_get_plugin_by_id.argtypes = [ctypes.c_char_p]
    plugin = g.go_plugins_get_plugin_by_id(PLUGIN_ID.encode())
    if not plugin:
        return None
    g.go_plugin_use_ref.argtypes = [ctypes.c_void_p]
    g.go_plugin_use_ref(plugin)
    g.go_plugin_get_dir_name.restype = ctypes.c_char_p
    g.go_plugin_get_dir_name.argtypes = [ctypes.c_void_p]
    d = g.go_plugin_get_dir_name(plugin)
    return d.decode() if d else None


def _plugin_dir():
    pinned = _goffice_plugin_dir()  # also keeps the plugin active until exit
    here = globals().get("__file__")
    return (os.environ.get("ELLIPSA_GNUMERIC_PLUGIN_DIR") or pinned
            or (os.path.dirname(os.path.abspath(here)) if here else None))


def _library_path(plugin_dir):
    """(path, version the plugin was made for): ELLIPSA_LIBRARY, else the
    library copied next to the plugin, else the build tree's library recorded
    when the plugin folder was made."""
    with open(os.path.join(plugin_dir, "paths.json")) as f:
        recorded = json.load(f)
    local = os.path.join(plugin_dir, "libellipsa.so")
    path = os.environ.get("ELLIPSA_LIBRARY") or (local if os.path.exists(local) else recorded["library"])
    return path, recorded.get("version")


def _raise(text):
    # The loader compares with the class on the Gnumeric module of the
    # interpreter that calls us, which is not always the one this module was
    # loaded in: import sys here, at call time, to reach that interpreter's.
    import sys as calling_sys
    mod = calling_sys.modules.get("Gnumeric")
    if mod is not None and getattr(mod, "GnumericError", None) is not Gnumeric.GnumericError:
        mod.GnumericError = Gnumeric.GnumericError
    raise Gnumeric.GnumericError(text)


def _rows_of_reference(ref, bridge):
    """Cells of a range reference as a list of rows, error cells marked."""
    rows = Gnumeric.functions["transpose"](ref)
    if type(rows) is not list:
        rows = [[rows]]
    rows = [list(r) if type(r) is list else [r] for r in rows]
    present = sum(1 for r in rows for c in r if c is not None)
    counta = Gnumeric.functions["counta"]
    if counta(ref) > present:  # some None cells are error values, not blanks
        offset = Gnumeric.functions["offset"]
        for i, r in enumerate(rows):
            if None in r and counta(offset(ref, i, 0, 1, len(r))) > sum(1 for c in r if c is not None):
                for j, c in enumerate(r):
                    if c is None and counta(offset(ref, i, j, 1, 1)) > 0:
                        r[j] = bridge.ERROR
    return rows


def _to_bridge(x, kind, optional, bridge):
    """One Gnumeric argument as a bridge value (None, number, text, flag or Block)."""
    t = type(x)
    if optional and kind == bridge.ARG_RANGE and t is float and x == 0.0:
        return None  # an empty argument in a range position: left out
    if x is None or t is float or t is int or t is str or t is bool:
        if kind == bridge.ARG_RANGE and (t is float or t is int):
            return bridge.Block([[float(x)]])
        return x
    if t is list:  # an array constant or array expression: a list of columns
        cols = [list(c) if type(c) is list else [c] for c in x]
        return bridge.Block([list(r) for r in zip(*cols)])
    return bridge.Block(_rows_of_reference(x, bridge))


def _to_gnumeric(rows, bridge):
    if len(rows) == 1 and len(rows[0]) == 1:
        v = rows[0][0]
        if isinstance(v, bridge.CellError):
            _raise(bridge.ERROR_TEXT[v.code])
        return "" if v is None else v
    nan = float("nan")
    cols = []
    for j in range(len(rows[0])):
        col = []
        for r in rows:
            v = r[j]
            col.append("" if v is None else nan if isinstance(v, bridge.CellError) else v)
        cols.append(col)
    return cols


def _help_text(f):
    lines = ["@GNM_FUNC_HELP_NAME@%s:%s" % (f["name"], f["help"])]
    for a in f["arguments"]:
        extra = " (optional; default %s)" % a["default"] if a["optional"] else ""
        lines.append("@GNM_FUNC_HELP_ARG@%s:%s%s" % (a["name"], a["help"], extra))
    lines.append("@GNM_FUNC_HELP_DESCRIPTION@Result: %s. Blank cells are missing values; a row with text "
                 "or an error value gives an error in that row only. Part of ellipsa." % f["shape_text"])
    return "\n".join(lines)


def _argspec(f):
    spec = ""
    for i, a in enumerate(f["arguments"]):
        if i == f["required"]:
            spec += "|"
        # A: ranges (a blank cell comes as a 1 x 1 range, an empty argument as
        # 0); E: scalars (a blank cell or an empty argument comes as None).
        # '?' and 'S' would drop every argument after a blank one, and '?'
        # crashes the host on a blank cell.
        spec += "A" if a["kind"] == 1 else "E"
    return spec


def _make(index, record, lib, bridge):
    kinds = [(a["kind"], a["optional"]) for a in record["arguments"]]

    def sheet_function(*args):
        values = [_to_bridge(x, kinds[i][0], kinds[i][1], bridge) if i < len(kinds) else x
                  for i, x in enumerate(args)]
        try:
            rows = lib.evaluate(index, values)
        except bridge.SheetFailure as e:
            message = e.message.split(": ", 1)[-1] if e.message.startswith("ellipsa_sheet_") else e.message
            _raise(ERROR_PREFIX + message)
        return _to_gnumeric(rows, bridge)

    sheet_function.__doc__ = _help_text(record)
    return sheet_function


def _make_unavailable(record, reason):
    def unavailable(*args):
        _raise(ERROR_PREFIX + "the ellipsa library cannot be used (" + reason + ")")

    unavailable.__doc__ = _help_text(record)
    return unavailable


def _register():
    table = {}
    plugin_dir = _plugin_dir()
    if plugin_dir is None:
        return table
    sys.path.insert(0, plugin_dir)
    import ellipsa_sheet as bridge
    try:
        path, made_for = _library_path(plugin_dir)
        lib = bridge.SheetLibrary(path)
        if made_for and lib.version() != made_for:
            raise ValueError("library %s is version %s, the plugin was made for %s; reinstall the plugin"
                             % (path, lib.version(), made_for))
        records = bridge.catalog_records(lib)
        for f, record in zip(lib.catalog(), records):
            table[f.name.lower()] = (_argspec(record), ",".join(a["name"] for a in record["arguments"]),
                                     _make(f.index, record, lib, bridge))
    except (OSError, AttributeError, KeyError, ValueError) as e:
        # No usable library: every function still exists and says why.
        with open(os.path.join(plugin_dir, "catalog.json")) as f:
            records = json.load(f)
        for record in records:
            table[record["name"].lower()] = (_argspec(record), ",".join(a["name"] for a in record["arguments"]),
                                              _make_unavailable(record, str(e)))
    return table


if Gnumeric is not None:
    ellipsa_functions = _register()
