"""ctypes declarations of the ellipsa C interface (capi/include/ellipsa.h).

This module only loads the shared library, mirrors the header's structs and
constants, and turns a non-zero status into :class:`Error`. It does no
numerics of its own.
"""
import ctypes
import os

from ._version import __version__

# --------------------------------------------------------------------------
# Status codes and enumerations, copied from ellipsa.h.
OK = 0
ERR_NULL = 1
ERR_ARGUMENT = 2
ERR_SHAPE = 3
ERR_STATE = 4
ERR_DATA = 10
ERR_FORMAT = 11
ERR_MEMORY = 12
ERR_CANCELLED = 13
ERR_INTERNAL = 14
NUM_SINGULAR = 20
NUM_NOT_CONVERGED = 21
NUM_EXACT_FIT = 22

KIND_GAUSSIAN = 1
KIND_MIXTURE = 2

DIVISORS = {"n": 1, "n-1": 2}
ROW_SETS = {"h_subset": 1, "outliers": 2, "dropped": 3}
PHASES = {1: 1, 2: 2, "I": 1, "II": 2}


class Error(Exception):
    """A call into the ellipsa library failed.

    Attributes:
        status (int): the ellipsa_status code (e.g. 3).
        status_name (str): its constant name (e.g. "ELLIPSA_ERR_SHAPE").
        message (str): the library's detailed message (ellipsa_last_error()).
    """

    def __init__(self, status, status_name, message):
        super().__init__("%s: %s" % (status_name, message))
        self.status = status
        self.status_name = status_name
        self.message = message


# --------------------------------------------------------------------------
# Structs, field for field as in ellipsa.h.
class Matrix(ctypes.Structure):
    """struct ellipsa_matrix: strides are counted in elements, not bytes."""
    _fields_ = [
        ("data", ctypes.POINTER(ctypes.c_double)),
        ("rows", ctypes.c_int64),
        ("cols", ctypes.c_int64),
        ("row_stride", ctypes.c_int64),
        ("col_stride", ctypes.c_int64),
    ]


class Candidate(ctypes.Structure):
    """struct ellipsa_candidate (one entry of a mixture model choice)."""
    _fields_ = [
        ("struct_size", ctypes.c_int64),
        ("components", ctypes.c_int32),
        ("structure", ctypes.c_int32),
        ("log_likelihood", ctypes.c_double),
        ("parameters", ctypes.c_int64),
        ("bic", ctypes.c_double),
        ("icl", ctypes.c_double),
        ("converged", ctypes.c_int32),
        ("chosen", ctypes.c_int32),
    ]


_dp = ctypes.POINTER(ctypes.c_double)
# ellipsa_progress_fn: int (*)(const char *stage, double fraction, void *user)
PROGRESS_FN = ctypes.CFUNCTYPE(ctypes.c_int, ctypes.c_char_p, ctypes.c_double, ctypes.c_void_p)
_ip = ctypes.POINTER(ctypes.c_int32)


class ScoresBuffers(ctypes.Structure):
    """struct ellipsa_scores: caller-owned buffers; NULL fields are skipped."""
    _fields_ = [
        ("struct_size", ctypes.c_int64),
        ("squared_distance", _dp),
        ("p_value", _dp),
        ("flag", _ip),
        ("observed", _ip),
        ("contribution", _dp),
        ("conditional_drop", _dp),
        ("component", _ip),
        ("membership", _dp),
        ("log_density", _dp),
        ("low_density", _ip),
    ]


class CompareOptions(ctypes.Structure):
    """struct ellipsa_compare_options."""
    _fields_ = [
        ("struct_size", ctypes.c_int64),
        ("robust", ctypes.c_int32),
        ("permutations", ctypes.c_int32),
        ("seed", ctypes.c_uint64),
        ("alpha", ctypes.c_double),
        ("progress", PROGRESS_FN),
        ("progress_user", ctypes.c_void_p),
    ]


class TestResult(ctypes.Structure):
    """struct ellipsa_test_result (one test of a comparison)."""
    _fields_ = [
        ("struct_size", ctypes.c_int64),
        ("statistic", ctypes.c_double),
        ("transformed", ctypes.c_double),
        ("df1", ctypes.c_double),
        ("df2", ctypes.c_double),
        ("p_value", ctypes.c_double),
        ("law", ctypes.c_int32),
        ("approximate", ctypes.c_int32),
        ("permutations_used", ctypes.c_int64),
        ("permutations_failed", ctypes.c_int64),
    ]


class VariableShift(ctypes.Structure):
    """struct ellipsa_variable_shift (one variable of a comparison)."""
    _fields_ = [("struct_size", ctypes.c_int64)] + [
        (name, ctypes.c_double) for name in
        ("reference_mean", "reference_sd", "batch_mean", "batch_sd", "shift_in_sd", "t", "df", "p_value", "p_holm")]


class ShapeTest(ctypes.Structure):
    """struct ellipsa_shape_test (Mardia's skewness and kurtosis)."""
    _fields_ = [("struct_size", ctypes.c_int64), ("rows", ctypes.c_int64)] + [
        (name, ctypes.c_double) for name in
        ("skewness", "skewness_statistic", "skewness_df", "skewness_p_value", "kurtosis", "kurtosis_expected",
         "kurtosis_z", "kurtosis_p_value")] + [("approximate", ctypes.c_int32)]


# --------------------------------------------------------------------------
# Locating the library. One rule, in this order (README.md, "Finding the
# library"):
#   1. ELLIPSA_LIBRARY, the full path of a libellipsa.so: that file, nothing else.
#   2. In a source checkout only (this package is bindings-c/python/ellipsa of
#      a tree that holds capi/include/ellipsa.h): that tree's build/lib.
#   3. The system's dynamic loader, by soname libellipsa.so.<MAJOR>: the
#      folders of LD_LIBRARY_PATH, then the ld.so cache (ldconfig), then the
#      default folders. An installed copy (`cmake --install`) is found here.
# The soname carries the ABI major (docs/versioning.md), so step 3 never picks
# a library of another major; a file named by step 1 or 2 is checked instead.
_MAJOR = int(__version__.split(".")[0])
SONAME = "libellipsa.so.%d" % _MAJOR


def _source_tree_library():
    here = os.path.dirname(os.path.abspath(__file__))
    root = os.path.normpath(os.path.join(here, "..", "..", ".."))
    if not os.path.isfile(os.path.join(root, "capi", "include", "ellipsa.h")):
        return None  # an installed package: no build folder to guess
    return os.path.join(root, "build", "lib", "libellipsa.so")


def _candidate_paths():
    """The places step 1, 2 and 3 look at, in order."""
    env = os.environ.get("ELLIPSA_LIBRARY")
    if env:
        return [env]
    paths = []
    in_tree = _source_tree_library()
    if in_tree is not None:
        paths.append(in_tree)
    paths.append(SONAME)
    return paths


def _load():
    env = os.environ.get("ELLIPSA_LIBRARY")
    tried = []
    for path in _candidate_paths():
        if os.sep in path and not os.path.exists(path) and not env:
            tried.append(path + " (missing)")
            continue
        try:
            return ctypes.CDLL(path)
        except OSError as exc:
            tried.append("%s (%s)" % (path, exc))
            if env:
                break
    raise ImportError("ellipsa: cannot load the shared library; tried: " + "; ".join(tried) +
                      ". Set ELLIPSA_LIBRARY to the full path of libellipsa.so, or put the folder "
                      "holding %s on LD_LIBRARY_PATH." % SONAME)


lib = _load()


def library_path():
    """The full path of the libellipsa file this process loaded (read from
    /proc/self/maps on Linux; else the name it was opened by)."""
    try:
        with open("/proc/self/maps") as maps:
            for line in maps:
                fields = line.split(None, 5)
                if len(fields) == 6 and os.path.basename(fields[5].strip()).startswith("libellipsa.so"):
                    return fields[5].strip()
    except OSError:
        pass
    return lib._name

_c = ctypes
_status = _c.c_int32
_i64p = _c.POINTER(_c.c_int64)
_i32p = _c.POINTER(_c.c_int32)
_vp = _c.c_void_p  # opaque handles
_mp = _c.POINTER(Matrix)

# name: (restype, argtypes)
_SIGNATURES = {
    "ellipsa_version": (_c.c_char_p, []),
    "ellipsa_version_number": (_c.c_int32, []),
    "ellipsa_status_string": (_c.c_char_p, [_status]),
    "ellipsa_last_error": (_c.c_char_p, []),
    "ellipsa_chi2_quantile": (_status, [_dp, _c.c_double, _c.c_double]),
    "ellipsa_chi2_tail": (_status, [_dp, _c.c_double, _c.c_double]),
    "ellipsa_f_quantile": (_status, [_dp, _c.c_double, _c.c_double, _c.c_double]),
    "ellipsa_f_tail": (_status, [_dp, _c.c_double, _c.c_double, _c.c_double]),
    "ellipsa_beta_quantile": (_status, [_dp, _c.c_double, _c.c_double, _c.c_double]),
    "ellipsa_beta_tail": (_status, [_dp, _c.c_double, _c.c_double, _c.c_double]),
    "ellipsa_hotelling_limit": (_status, [_dp, _c.c_int32, _c.c_int64, _c.c_int64, _c.c_double]),
    "ellipsa_fit_options_create": (_status, [_c.POINTER(_vp), _c.c_int32]),
    "ellipsa_fit_options_destroy": (None, [_vp]),
    "ellipsa_method_from_name": (_status, [_i32p, _c.c_char_p]),
    "ellipsa_method_name": (_c.c_char_p, [_c.c_int32]),
    "ellipsa_structure_from_name": (_status, [_i32p, _c.c_char_p]),
    "ellipsa_structure_name": (_c.c_char_p, [_c.c_int32]),
    "ellipsa_missing_from_name": (_status, [_i32p, _c.c_char_p]),
    "ellipsa_missing_name": (_c.c_char_p, [_c.c_int32]),
    "ellipsa_fit_options_set_divisor": (_status, [_vp, _c.c_int32]),
    "ellipsa_fit_options_set_missing": (_status, [_vp, _c.c_int32]),
    "ellipsa_fit_options_set_column_names": (_status, [_vp, _c.POINTER(_c.c_char_p), _c.c_int64]),
    "ellipsa_fit_options_set_alpha": (_status, [_vp, _c.c_double]),
    "ellipsa_fit_options_set_seed": (_status, [_vp, _c.c_uint64]),
    "ellipsa_fit_options_set_components": (_status, [_vp, _c.c_int32, _c.c_int32]),
    "ellipsa_fit_options_set_structure": (_status, [_vp, _c.c_int32]),
    "ellipsa_fit_options_set_restarts": (_status, [_vp, _c.c_int32]),
    "ellipsa_fit_options_set_iterations": (_status, [_vp, _c.c_int32, _c.c_double]),
    "ellipsa_fit_options_set_regularisation": (_status, [_vp, _c.c_double]),
    "ellipsa_fit_options_set_progress": (_status, [_vp, PROGRESS_FN, _vp]),
    "ellipsa_model_fit": (_status, [_c.POINTER(_vp), _mp, _vp]),
    "ellipsa_model_destroy": (None, [_vp]),
    "ellipsa_model_describe": (_status, [_i32p, _i32p, _i64p, _i32p, _vp]),
    "ellipsa_model_rows": (_status, [_i64p, _i64p, _vp]),
    "ellipsa_model_column_name": (_status, [_c.POINTER(_c.c_char_p), _vp, _c.c_int64]),
    "ellipsa_model_component": (_status, [_dp, _c.c_int64, _dp, _c.c_int64, _dp, _vp, _c.c_int32]),
    "ellipsa_model_raw_estimate": (_status, [_dp, _c.c_int64, _dp, _c.c_int64, _vp]),
    "ellipsa_model_diagnostic": (_status, [_dp, _vp, _c.c_char_p]),
    "ellipsa_model_row_set": (_status, [_i64p, _c.c_int64, _i64p, _vp, _c.c_int32]),
    "ellipsa_model_selection": (_status, [_c.POINTER(Candidate), _c.c_int64, _i64p, _vp]),
    "ellipsa_candidate_explain": (_status, [_c.POINTER(_c.c_char_p), _vp, _c.c_int64]),
    "ellipsa_model_score": (_status, [_c.POINTER(ScoresBuffers), _vp, _mp, _c.c_double]),
    # The saved text is taken as a void pointer so it can be handed back to
    # ellipsa_text_free unchanged (c_char_p would convert it to bytes).
    "ellipsa_model_save": (_status, [_c.POINTER(_vp), _i64p, _vp]),
    "ellipsa_text_free": (None, [_vp]),
    "ellipsa_model_load": (_status, [_c.POINTER(_vp), _c.c_char_p, _c.c_int64]),
    "ellipsa_batch_compare": (_status, [_c.POINTER(_vp), _mp, _mp, _c.POINTER(CompareOptions)]),
    "ellipsa_comparison_destroy": (None, [_vp]),
    "ellipsa_comparison_test": (_status, [_c.POINTER(TestResult), _vp, _c.c_int32]),
    "ellipsa_comparison_variables": (_status, [_c.POINTER(VariableShift), _c.c_int64, _i64p, _vp]),
    "ellipsa_comparison_rows": (_status, [_i64p, _i64p, _i64p, _i64p, _vp]),
    "ellipsa_data_shape": (_status, [_c.POINTER(ShapeTest), _mp]),
    "ellipsa_model_shape": (_status, [_c.POINTER(ShapeTest), _vp, _mp]),
}



def _declare():
    """Declares every function; refuses a library of another major version or
    one too old to have a function this binding calls."""
    lib.ellipsa_version.restype = _c.c_char_p
    lib.ellipsa_version.argtypes = []
    loaded = lib.ellipsa_version().decode("ascii", "replace")
    if int(loaded.split(".")[0]) != _MAJOR:
        raise ImportError("ellipsa: %s is version %s; this binding (%s) needs major version %d"
                          % (lib._name, loaded, __version__, _MAJOR))
    for name, (res, args) in _SIGNATURES.items():
        try:
            fn = getattr(lib, name)
        except AttributeError:
            raise ImportError("ellipsa: %s (version %s) has no %s; this binding is version %s"
                              % (lib._name, loaded, name, __version__)) from None
        fn.restype = res
        fn.argtypes = args


_declare()


def _text(raw):
    return raw.decode("utf-8", "replace") if raw is not None else ""


def status_name(status):
    """The constant name of a status code, e.g. "ELLIPSA_ERR_SHAPE"."""
    return _text(lib.ellipsa_status_string(status))


def check(status):
    """Raises Error for a non-zero status, with the thread's last message.

    The message is read right after the failing call, on the same thread,
    as the header requires.
    """
    if status != OK:
        message = _text(lib.ellipsa_last_error())
        raise Error(int(status), status_name(status), message)
