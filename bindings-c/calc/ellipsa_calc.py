"""LibreOffice Calc add-in component for ellipsa's sheet functions.

Calc loads this file from the installed extension (ellipsa-calc.oxt) through
its Python component loader. The component serves every function of the
library's own catalog (ellipsa_sheet_* in ellipsa.h) through the host-neutral
bridge ellipsa_sheet.py; the IDL interface it implements is generated from
the same catalog at build time (make_calc_addin.py), so there is no code per
function here.

Names stored in saved workbooks: Calc writes a call as the upper-cased
`<service name>.<method>`, e.g. ORG.ELLIPSA.SHEETFUNCTIONS.DIST2. SERVICE_NAME
and the method names (the catalog name without "ELL.", lower case) are
therefore part of every saved workbook and never change.

Host facts this relies on (LibreOffice Calc 7.4, measured here): range
arguments as sequence<sequence<any>> keep blanks ('') apart from zeros; an
error cell inside a range stops the call before it reaches us (Err:504); an
omitted optional `any` is None, a blank cell given for it is 0.0; a NaN whose
low 32 bits hold a Calc error code shows that error, also inside an array;
an IllegalArgumentException shows Err:502.
"""
import json
import os
import struct
import sys
import traceback

import uno
import unohelper
from com.sun.star.lang import IllegalArgumentException, XLocalizable, XServiceInfo, XServiceName
from com.sun.star.sheet import XAddIn
from com.sun.star.sheet import NoConvergenceException
try:
    from org.ellipsa import XSheetFunctions
except ImportError:
    # `unopkg add --shared` registers the component before the extension's
    # type library is visible; registration needs only the names below, and
    # Calc imports this module afresh, with the types, when it uses it.
    XSheetFunctions = object

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import ellipsa_sheet as bridge  # noqa: E402

SERVICE_NAME = "org.ellipsa.SheetFunctions"
IMPLEMENTATION_NAME = "org.ellipsa.SheetFunctions.Python"
CATEGORY = "Statistical"  # Calc only recognises its own category names


def method_name(function_name):
    return function_name.split(".", 1)[1].lower()


def calc_error(code):
    """A NaN whose low 32 bits carry a Calc error code: shown as that error."""
    return struct.unpack("<d", struct.pack("<Q", 0x7FF8000000000000 | code))[0]


# Calc's error codes (host notes): 519 #VALUE!, 503 #NUM!, 32767 #N/A.
CELL_ERRORS = {bridge.ERROR_VALUE: calc_error(519), bridge.ERROR_NUM: calc_error(503),
               bridge.ERROR_NA: calc_error(32767)}


def _library():
    path = os.environ.get("ELLIPSA_LIBRARY") or os.path.join(HERE, "libellipsa.so")
    return bridge.SheetLibrary(path)


CANARY = "ELL.VERSION"  # answers with a text even when the library cannot be used
with open(os.path.join(HERE, "build_info.json")) as f:
    MADE_FOR = json.load(f)["version"]
try:
    LIBRARY = _library()
    LOAD_ERROR = None
    if LIBRARY.version() != MADE_FOR:
        LOAD_ERROR = "library %s is version %s, the extension was made for %s; reinstall the extension" % (
            LIBRARY.path, LIBRARY.version(), MADE_FOR)
        LIBRARY = None
except OSError as e:  # the library is missing or broken: every function says so
    LIBRARY = None
    LOAD_ERROR = str(e)
with open(os.path.join(HERE, "catalog.json")) as f:
    RECORDS = json.load(f)
BY_METHOD = {method_name(r["name"]): (i, r) for i, r in enumerate(RECORDS)}


def _to_bridge(x, kind):
    """One Calc argument as a bridge value."""
    if x is None:
        return None
    if isinstance(x, tuple):  # a range: rows of cells ('' blank, str text, float number)
        rows = [[None if c == "" else c for c in r] for r in x]
        return bridge.Block(rows)
    if kind == bridge.ARG_RANGE and isinstance(x, float):
        return bridge.Block([[x]])
    return x


def _to_calc(rows):
    out = []
    for r in rows:
        out.append(tuple(CELL_ERRORS[v.code] if isinstance(v, bridge.CellError) else "" if v is None else v
                         for v in r))
    return tuple(out)


def _make(method, index, record):
    kinds = [a["kind"] for a in record["arguments"]]
    scalar = record["shape"] == bridge.SHAPE_SCALAR

    def call(self, *args):
        try:
            return evaluate(self, args)
        except (IllegalArgumentException, NoConvergenceException):
            raise
        except Exception:
            traceback.print_exc()  # to soffice's standard error; Calc shows #VALUE!
            raise

    def evaluate(self, args):
        if LIBRARY is None:
            message = "ellipsa: the library cannot be used (%s)" % LOAD_ERROR
            if record["name"] == CANARY:
                return message
            raise IllegalArgumentException(message, self, 0)
        values = [_to_bridge(x, kinds[i]) for i, x in enumerate(args)]
        while values and values[-1] is None:
            values.pop()
        try:
            rows = LIBRARY.evaluate(index, values)
        except bridge.SheetFailure as e:
            if e.status_name == "ELLIPSA_NUM_NOT_CONVERGED":
                raise NoConvergenceException(e.message, self)
            if e.status_name.startswith("ELLIPSA_NUM_"):
                num = CELL_ERRORS[bridge.ERROR_NUM]
                return num if scalar else ((num,),)
            raise IllegalArgumentException("ellipsa: " + e.message, self, 0)
        result = _to_calc(rows)
        return result[0][0] if scalar else result

    call.__name__ = method
    return call


class SheetFunctions(unohelper.Base, XAddIn, XServiceName, XServiceInfo, XLocalizable, XSheetFunctions):
    def __init__(self, ctx):
        self.ctx = ctx
        self.locale = None

    # XAddIn (the programmatic-name method is spelt this way in the API)
    def getProgrammaticFuntionName(self, display):
        for method, (_, r) in BY_METHOD.items():
            if r["name"] == display:
                return method
        return ""

    def getDisplayFunctionName(self, method):
        return BY_METHOD[method][1]["name"] if method in BY_METHOD else ""

    def getFunctionDescription(self, method):
        return BY_METHOD[method][1]["help"] if method in BY_METHOD else ""

    def getDisplayArgumentName(self, method, argument):
        args = BY_METHOD[method][1]["arguments"] if method in BY_METHOD else []
        return args[argument]["name"] if 0 <= argument < len(args) else ""

    def getArgumentDescription(self, method, argument):
        args = BY_METHOD[method][1]["arguments"] if method in BY_METHOD else []
        if not 0 <= argument < len(args):
            return ""
        a = args[argument]
        return a["help"] + (" (optional; default %s)" % a["default"] if a["optional"] else "")

    def getProgrammaticCategoryName(self, method):
        return CATEGORY

    def getDisplayCategoryName(self, method):
        return CATEGORY

    # XServiceName, XServiceInfo, XLocalizable
    def getServiceName(self):
        return SERVICE_NAME

    def getImplementationName(self):
        return IMPLEMENTATION_NAME

    def supportsService(self, name):
        return name in self.getSupportedServiceNames()

    def getSupportedServiceNames(self):
        return ("com.sun.star.sheet.AddIn", SERVICE_NAME)

    def setLocale(self, locale):
        self.locale = locale

    def getLocale(self):
        return self.locale or uno.createUnoStruct("com.sun.star.lang.Locale")


for _method, (_index, _record) in BY_METHOD.items():
    setattr(SheetFunctions, _method, _make(_method, _index, _record))

g_ImplementationHelper = unohelper.ImplementationHelper()
g_ImplementationHelper.addImplementation(SheetFunctions, IMPLEMENTATION_NAME,
                                         ("com.sun.star.sheet.AddIn", SERVICE_NAME))
