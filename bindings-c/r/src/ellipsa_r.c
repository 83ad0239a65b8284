/*
 * ellipsa_r.c: the .Call glue between R and the ellipsa C interface.
 *
 * Thin on purpose: every number comes from libellipsa; this file only moves
 * data between R objects and the C calls. It includes nothing but ellipsa.h and
 * R's headers.
 *
 * Two rules keep it safe:
 *  - Rf_error() longjmps. Before it runs, nothing the library allocated may be
 *    held only by a C local (fit options are destroyed first, saved text is
 *    released by an unwind-protect cleanup), and the library's message is
 *    copied first, because ellipsa_last_error() is only valid until the next
 *    ellipsa call.
 *  - R allocations can longjmp too, so R values are read into C locals before a
 *    library handle is created, and a fitted model is owned by an external
 *    pointer (with a finalizer) that exists before the fit is attempted.
 *
 * R matrices are column-major doubles: they are viewed in place with row
 * stride 1 and column stride nrow (no copy). Matrices the library returns are
 * row-major and are transposed into R's layout here.
 */
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <R.h>
#include <R_ext/Rdynload.h>
#include <Rinternals.h>

#include "ellipsa.h"

/* ---------------------------------------------------------------- errors */

typedef struct failure {
  ellipsa_status status;
  char detail[4096];
} failure;

/* Copies the library's message right after the failing call. */
static void capture_failure(failure* f, ellipsa_status status) {
  f->status = status;
  snprintf(f->detail, sizeof f->detail, "%s", ellipsa_last_error());
}

/* The R-side wrapper turns the leading status name into a condition field. */
static void NORET raise_failure(const failure* f) {
  Rf_errorcall(R_NilValue, "%s: %s", ellipsa_status_string(f->status), f->detail);
}

static void check(ellipsa_status status) {
  if (status != ELLIPSA_OK) {
    failure f;
    capture_failure(&f, status);
    raise_failure(&f);
  }
}

/* ---------------------------------------------------------------- models */

static const char* const kModelTag = "ellipsa_model";

static void model_finalizer(SEXP handle) {
  ellipsa_model* m = (ellipsa_model*)R_ExternalPtrAddr(handle);
  if (m != NULL) {
    ellipsa_model_destroy(m);
    R_ClearExternalPtr(handle);
  }
}

/* An empty handle that will own a model; PROTECTed by the caller. */
static SEXP new_model_handle(void) {
  SEXP handle = PROTECT(R_MakeExternalPtr(NULL, Rf_install(kModelTag), R_NilValue));
  R_RegisterCFinalizerEx(handle, model_finalizer, TRUE);
  UNPROTECT(1);
  return handle;
}

static const ellipsa_model* model_of(SEXP handle) {
  if (TYPEOF(handle) != EXTPTRSXP || R_ExternalPtrTag(handle) != Rf_install(kModelTag))
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_NULL: not an ellipsa model handle");
  const ellipsa_model* m = (const ellipsa_model*)R_ExternalPtrAddr(handle);
  if (m == NULL)
    Rf_errorcall(R_NilValue,
                 "ELLIPSA_ERR_NULL: the model handle is empty (restored from a saved R session?); "
                 "keep models with ellipsa_save() and ellipsa_load()");
  return m;
}

/* --------------------------------------------------------------- matrices */

/* A zero-copy view of an R double matrix (column-major). */
static ellipsa_matrix view_of(SEXP x) {
  if (TYPEOF(x) != REALSXP) Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: x must be a double matrix");
  SEXP dim = Rf_getAttrib(x, R_DimSymbol);
  if (TYPEOF(dim) != INTSXP || XLENGTH(dim) != 2)
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_SHAPE: x must be a matrix (two dimensions)");
  const int64_t rows = INTEGER(dim)[0];
  const int64_t cols = INTEGER(dim)[1];
  return ellipsa_matrix_col_major(rows * cols > 0 ? REAL(x) : NULL, rows, cols);
}

/* An R matrix filled from a row-major rows x cols buffer. */
static SEXP matrix_from_row_major(const double* src, R_xlen_t rows, R_xlen_t cols) {
  SEXP out = PROTECT(Rf_allocMatrix(REALSXP, (int)rows, (int)cols));
  double* dst = REAL(out);
  for (R_xlen_t i = 0; i < rows; ++i)
    for (R_xlen_t j = 0; j < cols; ++j) dst[i + j * rows] = src[i * cols + j];
  UNPROTECT(1);
  return out;
}

/* ---------------------------------------------------------------- fitting */

/* Everything a fit needs, read from R before any library handle exists. */
typedef struct fit_request {
  const char* method;
  int divisor, missing, structure, restarts, max_iterations;
  int k_min, k_max;
  double alpha, tolerance, regularisation;
  int has_divisor, has_missing, has_structure, has_restarts, has_components;
  int has_alpha, has_seed, has_iterations, has_regularisation;
  uint64_t seed;
  const char** names;
  int64_t name_count;
} fit_request;

/* Reads an optional integer setting; returns whether it was given. */
static int optional_int(SEXP v, int* out) {
  if (Rf_isNull(v)) return 0;
  *out = Rf_asInteger(v);
  return 1;
}

static uint64_t parse_seed(SEXP v) {
  if (TYPEOF(v) != STRSXP || XLENGTH(v) != 1 || STRING_ELT(v, 0) == NA_STRING)
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: seed must be one decimal string");
  const char* text = CHAR(STRING_ELT(v, 0));
  char* end = NULL;
  errno = 0;
  unsigned long long s = strtoull(text, &end, 10);
  if (errno != 0 || end == text || *end != '\0' || text[0] == '-')
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: seed '%s' is not an integer in [0, 2^64)", text);
  return (uint64_t)s;
}

/* The element of the named list `settings` called `name`, or NULL. */
static SEXP setting(SEXP settings, const char* name) {
  SEXP names = Rf_getAttrib(settings, R_NamesSymbol);
  for (R_xlen_t i = 0; i < XLENGTH(settings); ++i)
    if (strcmp(CHAR(STRING_ELT(names, i)), name) == 0) return VECTOR_ELT(settings, i);
  return R_NilValue;
}

static fit_request read_request(SEXP method, SEXP settings, SEXP names) {
  /* settings: a named list built by the R layer; absent or NULL entries keep
   * the library's defaults. Codes are the ELLIPSA_ constants. */
  fit_request r;
  memset(&r, 0, sizeof r);
  if (!Rf_isString(method) || XLENGTH(method) != 1)
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: method must be one string");
  if (TYPEOF(settings) != VECSXP) Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: settings must be a list");
  r.method = Rf_translateCharUTF8(STRING_ELT(method, 0));
  r.has_divisor = optional_int(setting(settings, "divisor"), &r.divisor);
  r.has_missing = optional_int(setting(settings, "missing"), &r.missing);
  r.has_structure = optional_int(setting(settings, "structure"), &r.structure);
  r.has_restarts = optional_int(setting(settings, "restarts"), &r.restarts);
  SEXP components = setting(settings, "components");
  if (!Rf_isNull(components)) {
    if (TYPEOF(components) != INTSXP || XLENGTH(components) != 2)
      Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: components must be two integers");
    r.has_components = 1;
    r.k_min = INTEGER(components)[0];
    r.k_max = INTEGER(components)[1];
  }
  SEXP alpha = setting(settings, "alpha");
  r.has_alpha = !Rf_isNull(alpha);
  if (r.has_alpha) r.alpha = Rf_asReal(alpha);
  SEXP seed = setting(settings, "seed");
  r.has_seed = !Rf_isNull(seed);
  if (r.has_seed) r.seed = parse_seed(seed);
  SEXP max_iterations = setting(settings, "max_iterations");
  r.has_iterations = !Rf_isNull(max_iterations);
  if (r.has_iterations) {
    r.max_iterations = Rf_asInteger(max_iterations);
    r.tolerance = Rf_asReal(setting(settings, "tolerance"));
  }
  SEXP regularisation = setting(settings, "regularisation");
  r.has_regularisation = !Rf_isNull(regularisation);
  if (r.has_regularisation) r.regularisation = Rf_asReal(regularisation);
  if (!Rf_isNull(names)) {
    r.name_count = XLENGTH(names);
    r.names = (const char**)R_alloc((size_t)r.name_count + 1, sizeof(char*));
    for (int64_t j = 0; j < r.name_count; ++j) {
      SEXP s = STRING_ELT(names, j);
      r.names[j] = s == NA_STRING ? "NA" : Rf_translateCharUTF8(s);
    }
  }
  return r;
}

/* Applies the request to fresh options; no R call inside (nothing can longjmp). */
static ellipsa_status configure(ellipsa_fit_options* o, const fit_request* r) {
  ellipsa_status s = ELLIPSA_OK;
  if (s == ELLIPSA_OK && r->has_divisor) s = ellipsa_fit_options_set_divisor(o, r->divisor);
  if (s == ELLIPSA_OK && r->has_missing) s = ellipsa_fit_options_set_missing(o, r->missing);
  if (s == ELLIPSA_OK && r->has_structure) s = ellipsa_fit_options_set_structure(o, r->structure);
  if (s == ELLIPSA_OK && r->has_restarts) s = ellipsa_fit_options_set_restarts(o, r->restarts);
  if (s == ELLIPSA_OK && r->has_components) s = ellipsa_fit_options_set_components(o, r->k_min, r->k_max);
  if (s == ELLIPSA_OK && r->has_alpha) s = ellipsa_fit_options_set_alpha(o, r->alpha);
  if (s == ELLIPSA_OK && r->has_seed) s = ellipsa_fit_options_set_seed(o, r->seed);
  if (s == ELLIPSA_OK && r->has_iterations) s = ellipsa_fit_options_set_iterations(o, r->max_iterations, r->tolerance);
  if (s == ELLIPSA_OK && r->has_regularisation) s = ellipsa_fit_options_set_regularisation(o, r->regularisation);
  if (s == ELLIPSA_OK && r->names) s = ellipsa_fit_options_set_column_names(o, r->names, r->name_count);
  return s;
}

/* Interrupt check that cannot longjmp through the library (R_ToplevelExec
 * contains the jump); a pending Ctrl-C cancels the fit. */
static void check_interrupt_body(void* unused) {
  (void)unused;
  R_CheckUserInterrupt();
}

static int progress_allows_interrupt(const char* stage, double fraction, void* user) {
  (void)stage;
  (void)fraction;
  (void)user;
  return R_ToplevelExec(check_interrupt_body, NULL) == FALSE ? 1 : 0;
}

SEXP ellipsa_r_fit(SEXP x, SEXP method, SEXP settings, SEXP names) {
  const ellipsa_matrix view = view_of(x);
  const fit_request request = read_request(method, settings, names);
  SEXP handle = PROTECT(new_model_handle());

  ellipsa_method m = 0;
  check(ellipsa_method_from_name(&m, request.method));
  ellipsa_fit_options* options = NULL;
  check(ellipsa_fit_options_create(&options, m));
  ellipsa_status s = configure(options, &request);
  if (s == ELLIPSA_OK) s = ellipsa_fit_options_set_progress(options, progress_allows_interrupt, NULL);
  ellipsa_model* model = NULL;
  if (s == ELLIPSA_OK) s = ellipsa_model_fit(&model, &view, options);
  failure f;
  if (s != ELLIPSA_OK) capture_failure(&f, s);
  ellipsa_fit_options_destroy(options);
  if (s != ELLIPSA_OK) raise_failure(&f);

  R_SetExternalPtrAddr(handle, model);
  UNPROTECT(1);
  return handle;
}

/* ---------------------------------------------------------------- queries */

static SEXP named_list(int n, const char** names) {
  SEXP out = PROTECT(Rf_allocVector(VECSXP, n));
  SEXP nm = PROTECT(Rf_allocVector(STRSXP, n));
  for (int i = 0; i < n; ++i) SET_STRING_ELT(nm, i, Rf_mkChar(names[i]));
  Rf_setAttrib(out, R_NamesSymbol, nm);
  UNPROTECT(2);
  return out;
}

SEXP ellipsa_r_describe(SEXP handle) {
  const ellipsa_model* model = model_of(handle);
  int32_t kind = 0, components = 0;
  ellipsa_method method = 0;
  int64_t p = 0, used = 0, dropped = 0;
  check(ellipsa_model_describe(&kind, &method, &p, &components, model));
  check(ellipsa_model_rows(&used, &dropped, model));
  static const char* fields[] = {"kind",      "method",       "dimension",   "components",
                                 "rows_used", "rows_dropped", "column_names"};
  SEXP out = PROTECT(named_list(7, fields));
  SET_VECTOR_ELT(out, 0, Rf_mkString(kind == ELLIPSA_KIND_MIXTURE ? "mixture" : "gaussian"));
  SET_VECTOR_ELT(out, 1, Rf_mkString(ellipsa_method_name(method)));
  SET_VECTOR_ELT(out, 2, Rf_ScalarInteger((int)p));
  SET_VECTOR_ELT(out, 3, Rf_ScalarInteger(components));
  SET_VECTOR_ELT(out, 4, Rf_ScalarReal((double)used));
  SET_VECTOR_ELT(out, 5, Rf_ScalarReal((double)dropped));
  SEXP names = PROTECT(Rf_allocVector(STRSXP, (R_xlen_t)p));
  for (int64_t j = 0; j < p; ++j) {
    const char* name = NULL;
    check(ellipsa_model_column_name(&name, model, j));
    SET_STRING_ELT(names, j, Rf_mkCharCE(name, CE_UTF8));
  }
  SET_VECTOR_ELT(out, 6, names);
  UNPROTECT(2);
  return out;
}

static int64_t dimension_of(const ellipsa_model* model) {
  int64_t p = 0;
  check(ellipsa_model_describe(NULL, NULL, &p, NULL, model));
  return p;
}

/* list(location, scatter, weight) of component k (0-based); raw != 0 asks for
 * the MCD family's raw estimate instead. */
SEXP ellipsa_r_component(SEXP handle, SEXP k, SEXP raw) {
  const ellipsa_model* model = model_of(handle);
  const int64_t p = dimension_of(model);
  const int component = Rf_asInteger(k);
  double* location = (double*)R_alloc((size_t)p, sizeof(double));
  double* scatter = (double*)R_alloc((size_t)(p * p), sizeof(double));
  double weight = 1.0;
  if (Rf_asLogical(raw) == TRUE) check(ellipsa_model_raw_estimate(location, p, scatter, p * p, model));
  else check(ellipsa_model_component(location, p, scatter, p * p, &weight, model, component));
  static const char* fields[] = {"location", "scatter", "weight"};
  SEXP out = PROTECT(named_list(3, fields));
  SEXP loc = PROTECT(Rf_allocVector(REALSXP, (R_xlen_t)p));
  if (p > 0) memcpy(REAL(loc), location, (size_t)p * sizeof(double));
  SET_VECTOR_ELT(out, 0, loc);
  SET_VECTOR_ELT(out, 1, matrix_from_row_major(scatter, (R_xlen_t)p, (R_xlen_t)p));
  SET_VECTOR_ELT(out, 2, Rf_ScalarReal(weight));
  UNPROTECT(2);
  return out;
}

/* A named diagnostic; with missing_ok, a name that does not apply to this
 * model (ELLIPSA_ERR_STATE) gives NA instead of an error. */
SEXP ellipsa_r_diagnostic(SEXP handle, SEXP name, SEXP missing_ok) {
  const ellipsa_model* model = model_of(handle);
  if (!Rf_isString(name) || XLENGTH(name) != 1)
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: name must be one string");
  const char* text = Rf_translateCharUTF8(STRING_ELT(name, 0));
  double value = 0.0;
  const ellipsa_status s = ellipsa_model_diagnostic(&value, model, text);
  if (s == ELLIPSA_ERR_STATE && Rf_asLogical(missing_ok) == TRUE) return Rf_ScalarReal(NA_REAL);
  check(s);
  return Rf_ScalarReal(value);
}

/* Row set `which` (ELLIPSA_ROWS_ value) as 1-based doubles (R row numbers). */
SEXP ellipsa_r_row_set(SEXP handle, SEXP which) {
  const ellipsa_model* model = model_of(handle);
  const int32_t set = Rf_asInteger(which);
  int64_t count = 0;
  check(ellipsa_model_row_set(NULL, 0, &count, model, set));
  int64_t* rows = (int64_t*)R_alloc((size_t)count + 1, sizeof(int64_t));
  check(ellipsa_model_row_set(rows, count, &count, model, set));
  SEXP out = PROTECT(Rf_allocVector(REALSXP, (R_xlen_t)count));
  for (int64_t i = 0; i < count; ++i) REAL(out)[i] = (double)rows[i] + 1.0;
  UNPROTECT(1);
  return out;
}

SEXP ellipsa_r_selection(SEXP handle) {
  const ellipsa_model* model = model_of(handle);
  int64_t count = 0;
  check(ellipsa_model_selection(NULL, 0, &count, model));
  ellipsa_candidate* c = (ellipsa_candidate*)R_alloc((size_t)count + 1, sizeof(ellipsa_candidate));
  for (int64_t i = 0; i < count; ++i) c[i].struct_size = (int64_t)sizeof(ellipsa_candidate);
  check(ellipsa_model_selection(c, count, &count, model));
  static const char* fields[] = {"components", "structure", "log_likelihood", "parameters",
                                 "bic",        "icl",       "converged",      "chosen"};
  SEXP out = PROTECT(named_list(8, fields));
  const R_xlen_t n = (R_xlen_t)count;
  for (int f = 0; f < 8; ++f)
    SET_VECTOR_ELT(out, f, Rf_allocVector(f == 6 || f == 7 ? LGLSXP : f < 2 ? INTSXP : REALSXP, n));
  for (R_xlen_t i = 0; i < n; ++i) {
    INTEGER(VECTOR_ELT(out, 0))[i] = c[i].components;
    INTEGER(VECTOR_ELT(out, 1))[i] = c[i].structure;
    REAL(VECTOR_ELT(out, 2))[i] = c[i].log_likelihood;
    REAL(VECTOR_ELT(out, 3))[i] = (double)c[i].parameters;
    REAL(VECTOR_ELT(out, 4))[i] = c[i].bic;
    REAL(VECTOR_ELT(out, 5))[i] = c[i].icl;
    LOGICAL(VECTOR_ELT(out, 6))[i] = c[i].converged != 0;
    LOGICAL(VECTOR_ELT(out, 7))[i] = c[i].chosen != 0;
  }
  UNPROTECT(1);
  return out;
}

/* ---------------------------------------------------------------- scoring */

/* 1 / 0 / -1 (not scorable) become TRUE / FALSE / NA. */
static SEXP logical_from_flags(const int32_t* flags, R_xlen_t n) {
  SEXP out = PROTECT(Rf_allocVector(LGLSXP, n));
  for (R_xlen_t i = 0; i < n; ++i) LOGICAL(out)[i] = flags[i] < 0 ? NA_LOGICAL : flags[i] != 0;
  UNPROTECT(1);
  return out;
}

SEXP ellipsa_r_score(SEXP handle, SEXP x, SEXP level) {
  const ellipsa_model* model = model_of(handle);
  const ellipsa_matrix view = view_of(x);
  int32_t components = 0;
  int64_t p = 0;
  check(ellipsa_model_describe(NULL, NULL, &p, &components, model));
  if (view.cols != p)
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_SHAPE: x has %lld columns, the model has %lld", (long long)view.cols,
                 (long long)p);
  const R_xlen_t n = (R_xlen_t)view.rows;
  const size_t np = (size_t)n * (size_t)p + 1, nk = (size_t)n * (size_t)components + 1;

  /* Buffers are R memory: a longjmp can leak nothing of the library's. */
  static const char* fields[] = {"squared_distance", "p_value",     "flag",         "observed",         "component",
                                 "log_density",      "low_density", "contribution", "conditional_drop", "membership"};
  SEXP out = PROTECT(named_list(10, fields));
  SEXP d2 = PROTECT(Rf_allocVector(REALSXP, n));
  SEXP pv = PROTECT(Rf_allocVector(REALSXP, n));
  SEXP observed = PROTECT(Rf_allocVector(INTSXP, n));
  SEXP component = PROTECT(Rf_allocVector(INTSXP, n));
  SEXP log_density = PROTECT(Rf_allocVector(REALSXP, n));
  int32_t* flag = (int32_t*)R_alloc((size_t)n + 1, sizeof(int32_t));
  int32_t* low = (int32_t*)R_alloc((size_t)n + 1, sizeof(int32_t));
  double* contribution = (double*)R_alloc(np, sizeof(double));
  double* drop = (double*)R_alloc(np, sizeof(double));
  double* membership = (double*)R_alloc(nk, sizeof(double));

  ellipsa_scores scores = ELLIPSA_SCORES_INIT;
  scores.squared_distance = REAL(d2);
  scores.p_value = REAL(pv);
  scores.flag = flag;
  scores.observed = INTEGER(observed); /* int is int32_t on every platform R supports */
  scores.contribution = contribution;
  scores.conditional_drop = drop;
  scores.component = INTEGER(component);
  scores.membership = membership;
  scores.log_density = REAL(log_density);
  scores.low_density = low;
  check(ellipsa_model_score(&scores, model, &view, Rf_asReal(level)));

  for (R_xlen_t i = 0; i < n; ++i) INTEGER(component)[i] += 1; /* R counts from 1 */
  SET_VECTOR_ELT(out, 0, d2);
  SET_VECTOR_ELT(out, 1, pv);
  SET_VECTOR_ELT(out, 2, logical_from_flags(flag, n));
  SET_VECTOR_ELT(out, 3, observed);
  SET_VECTOR_ELT(out, 4, component);
  SET_VECTOR_ELT(out, 5, log_density);
  SET_VECTOR_ELT(out, 6, logical_from_flags(low, n));
  SET_VECTOR_ELT(out, 7, matrix_from_row_major(contribution, n, (R_xlen_t)p));
  SET_VECTOR_ELT(out, 8, matrix_from_row_major(drop, n, (R_xlen_t)p));
  SET_VECTOR_ELT(out, 9, matrix_from_row_major(membership, n, (R_xlen_t)components));
  UNPROTECT(6);
  return out;
}

/* ------------------------------------------------------------ model files */

typedef struct saved_text {
  char* text;
  int64_t length;
} saved_text;

static SEXP string_from_saved(void* data) {
  const saved_text* t = (const saved_text*)data;
  if (t->length > INT_MAX) Rf_errorcall(R_NilValue, "ELLIPSA_ERR_MEMORY: model text exceeds R's string limit");
  return Rf_ScalarString(Rf_mkCharLenCE(t->text, (int)t->length, CE_UTF8));
}

/* Runs on normal return and on a longjmp alike: the library's text is freed. */
static void free_saved(void* data, Rboolean jump) {
  (void)jump;
  saved_text* t = (saved_text*)data;
  ellipsa_text_free(t->text);
  t->text = NULL;
}

SEXP ellipsa_r_save(SEXP handle) {
  const ellipsa_model* model = model_of(handle);
  saved_text t = {NULL, 0};
  check(ellipsa_model_save(&t.text, &t.length, model));
  return R_UnwindProtect(string_from_saved, &t, free_saved, &t, NULL);
}

SEXP ellipsa_r_load(SEXP text) {
  if (!Rf_isString(text) || XLENGTH(text) != 1 || STRING_ELT(text, 0) == NA_STRING)
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: text must be one string");
  const char* bytes = Rf_translateCharUTF8(STRING_ELT(text, 0));
  const int64_t length = (int64_t)strlen(bytes);
  SEXP handle = PROTECT(new_model_handle());
  ellipsa_model* model = NULL;
  check(ellipsa_model_load(&model, bytes, length));
  R_SetExternalPtrAddr(handle, model);
  UNPROTECT(1);
  return handle;
}

/* ----------------------------------------------------------- distributions */

/* which: 1 chi2 quantile, 2 chi2 tail, 3 F quantile, 4 F tail, 5 Beta
 * quantile, 6 Beta tail; vectorised over x, parameters a and b scalar.
 * NA/NaN in x give NA/NaN (R's convention) without calling the library. */
SEXP ellipsa_r_distribution(SEXP which, SEXP x, SEXP a, SEXP b) {
  const int w = Rf_asInteger(which);
  const double pa = Rf_asReal(a), pb = Rf_asReal(b);
  const R_xlen_t n = XLENGTH(x);
  SEXP out = PROTECT(Rf_allocVector(REALSXP, n));
  for (R_xlen_t i = 0; i < n; ++i) {
    const double v = REAL(x)[i];
    double r = NA_REAL;
    if (ISNAN(v)) { /* R's convention: a missing argument gives a missing result */
      REAL(out)[i] = v;
      continue;
    }
    ellipsa_status s = ELLIPSA_ERR_ARGUMENT;
    switch (w) {
      case 1: s = ellipsa_chi2_quantile(&r, v, pa); break;
      case 2: s = ellipsa_chi2_tail(&r, v, pa); break;
      case 3: s = ellipsa_f_quantile(&r, v, pa, pb); break;
      case 4: s = ellipsa_f_tail(&r, v, pa, pb); break;
      case 5: s = ellipsa_beta_quantile(&r, v, pa, pb); break;
      case 6: s = ellipsa_beta_tail(&r, v, pa, pb); break;
      default: Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: unknown distribution function %d", w);
    }
    check(s);
    REAL(out)[i] = r;
  }
  UNPROTECT(1);
  return out;
}

SEXP ellipsa_r_hotelling_limit(SEXP phase, SEXP m, SEXP p, SEXP alpha) {
  double out = 0.0;
  if (!R_FINITE(Rf_asReal(m)) || !R_FINITE(Rf_asReal(p)))
    Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: m and p must be finite");
  check(ellipsa_hotelling_limit(&out, Rf_asInteger(phase), (int64_t)Rf_asReal(m), (int64_t)Rf_asReal(p),
                                Rf_asReal(alpha)));
  return Rf_ScalarReal(out);
}

SEXP ellipsa_r_version(void) {
  SEXP out = PROTECT(Rf_allocVector(STRSXP, 2));
  SET_STRING_ELT(out, 0, Rf_mkChar(ellipsa_version()));
  char header[32];
  snprintf(header, sizeof header, "%d.%d.%d", ELLIPSA_VERSION_MAJOR, ELLIPSA_VERSION_MINOR, ELLIPSA_VERSION_PATCH);
  SET_STRING_ELT(out, 1, Rf_mkChar(header));
  UNPROTECT(1);
  return out;
}

/* ---------------------------------------------------------------- names */

/* The library's names of its enumerations, by its own name and parse
 * functions (no table of names here): kind 1 methods, 2 covariance
 * structures, 3 missing-value policies. */
typedef const char* (*name_fn)(int32_t);
typedef ellipsa_status (*from_name_fn)(int32_t*, const char*);
static const name_fn kNameFns[] = {ellipsa_method_name, ellipsa_structure_name, ellipsa_missing_name};
static const from_name_fn kFromNameFns[] = {ellipsa_method_from_name, ellipsa_structure_from_name,
                                            ellipsa_missing_from_name};

static int name_kind(SEXP kind) {
  const int k = Rf_asInteger(kind);
  if (k < 1 || k > 3) Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: unknown kind of name %d", k);
  return k - 1;
}

/* Names of integer codes; NA stays NA, a code the library does not know
 * gives its "unknown". */
SEXP ellipsa_r_name(SEXP kind, SEXP codes) {
  const name_fn name = kNameFns[name_kind(kind)];
  if (!Rf_isInteger(codes)) Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: codes must be integers");
  const R_xlen_t n = XLENGTH(codes);
  SEXP out = PROTECT(Rf_allocVector(STRSXP, n));
  for (R_xlen_t i = 0; i < n; ++i) {
    const int code = INTEGER(codes)[i];
    SET_STRING_ELT(out, i, code == NA_INTEGER ? NA_STRING : Rf_mkChar(name((int32_t)code)));
  }
  UNPROTECT(1);
  return out;
}

/* Codes of names; NA stays NA, the first unknown name is an error carrying
 * the library's message (which lists the names). */
SEXP ellipsa_r_from_name(SEXP kind, SEXP names) {
  const from_name_fn from_name = kFromNameFns[name_kind(kind)];
  if (!Rf_isString(names)) Rf_errorcall(R_NilValue, "ELLIPSA_ERR_ARGUMENT: names must be character");
  const R_xlen_t n = XLENGTH(names);
  SEXP out = PROTECT(Rf_allocVector(INTSXP, n));
  for (R_xlen_t i = 0; i < n; ++i) {
    if (STRING_ELT(names, i) == NA_STRING) {
      INTEGER(out)[i] = NA_INTEGER;
      continue;
    }
    int32_t code = 0;
    check(from_name(&code, Rf_translateCharUTF8(STRING_ELT(names, i))));
    INTEGER(out)[i] = (int)code;
  }
  UNPROTECT(1);
  return out;
}

/* ------------------------------------------------------------ registration */

static const R_CallMethodDef kCallMethods[] = {{"ellipsa_r_fit", (DL_FUNC)&ellipsa_r_fit, 4},
                                               {"ellipsa_r_describe", (DL_FUNC)&ellipsa_r_describe, 1},
                                               {"ellipsa_r_component", (DL_FUNC)&ellipsa_r_component, 3},
                                               {"ellipsa_r_diagnostic", (DL_FUNC)&ellipsa_r_diagnostic, 3},
                                               {"ellipsa_r_row_set", (DL_FUNC)&ellipsa_r_row_set, 2},
                                               {"ellipsa_r_selection", (DL_FUNC)&ellipsa_r_selection, 1},
                                               {"ellipsa_r_score", (DL_FUNC)&ellipsa_r_score, 3},
                                               {"ellipsa_r_save", (DL_FUNC)&ellipsa_r_save, 1},
                                               {"ellipsa_r_load", (DL_FUNC)&ellipsa_r_load, 1},
                                               {"ellipsa_r_distribution", (DL_FUNC)&ellipsa_r_distribution, 4},
                                               {"ellipsa_r_hotelling_limit", (DL_FUNC)&ellipsa_r_hotelling_limit, 4},
                                               {"ellipsa_r_version", (DL_FUNC)&ellipsa_r_version, 0},
                                               {"ellipsa_r_name", (DL_FUNC)&ellipsa_r_name, 2},
                                               {"ellipsa_r_from_name", (DL_FUNC)&ellipsa_r_from_name, 2},
                                               {NULL, NULL, 0}};

static void register_routines(DllInfo* dll) {
  R_registerRoutines(dll, NULL, kCallMethods, NULL, NULL);
  R_useDynamicSymbols(dll, FALSE);
}

/* Called by dyn.load() for a file named ellipsa_r.so (ellipsa_build_glue). */
void R_init_ellipsa_r(DllInfo* dll) { register_routines(dll); }

/* Called when the folder is installed as the R package "ellipsa". */
void R_init_ellipsa(DllInfo* dll) { register_routines(dll); }
