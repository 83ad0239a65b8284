/**
 * @file ellipsa.h
 * @brief The whole public contract of the ellipsa library.
 *
 * ellipsa fits "normal profiles" of multivariate measurements (location and
 * scatter: classical, shrinkage, robust MCD, Gaussian mixtures) and scores rows
 * against them with calibrated probabilities and per-variable contributions.
 *
 * What this header does not declare is not API. It compiles alone as C99 and as
 * C++.
 *
 * @par Conventions that hold for every function
 * - Names are `ellipsa_<noun>_<verb>`; types `ellipsa_<noun>`; macros `ELLIPSA_`.
 * - Every call that can fail returns an ::ellipsa_status; ::ELLIPSA_OK is 0.
 *   Out-parameters come first. On failure, out-parameters are left unchanged
 *   unless the function says otherwise, and ellipsa_last_error() describes what
 *   went wrong.
 * - Besides the statuses its documentation lists, any call that returns an
 *   ::ellipsa_status may return ::ELLIPSA_ERR_MEMORY (an allocation failed or
 *   a size overflows) and ::ELLIPSA_ERR_INTERNAL (a defect in ellipsa); no
 *   call returns a status that is neither listed nor one of these two.
 * - No call aborts, exits, prints or lets a C++ exception escape.
 * - Handles are opaque; each `_destroy` accepts NULL and then does nothing.
 * - Matrices are passed as an ::ellipsa_matrix view (pointer, rows, cols, row
 *   stride, column stride), so row-major, column-major and sliced buffers are
 *   read in place. Rows are observations, columns are variables.
 * - Missing values are NaN. Each function states what it does with them.
 * - Buffers for results are allocated by the caller with the documented size.
 *   Memory that the library allocates has its own free function.
 *
 * @par Threads and reproducibility (the one statement; other sections refer here)
 * - There is no global mutable state: any function may be called from any
 *   thread, and calls on different handles never interfere.
 * - A call that takes a handle through a non-const pointer modifies it (the
 *   fit options' setters, ellipsa_accumulator_add(), the `into` of
 *   ellipsa_accumulator_merge()): that handle is used by one thread at a time.
 * - A handle passed through a const pointer is only read: a fitted
 *   ::ellipsa_model, an ::ellipsa_comparison, an accumulator being read, and
 *   fit options passed to ellipsa_model_fit() or
 *   ellipsa_model_from_accumulator() may be shared by any number of threads
 *   at once, as long as no thread modifies the handle meanwhile. (The
 *   ::ellipsa_sheet_cache is the one handle that threads may share while
 *   calls change it.)
 * - A progress callback is called only on the thread that made the call it
 *   reports on, never on a thread of the library's own. Fit options shared by
 *   concurrent fits carry one callback and one `user` pointer, so that
 *   callback is then called from every fitting thread, possibly at the same
 *   moment: it must be safe to call concurrently, or each thread must use its
 *   own options handle.
 * - Randomness comes only from explicit seeds, through the library's own
 *   generator (std::mt19937_64, whose sequence the C++ standard fixes) and its
 *   own integer sampling, never from the standard library's distributions or
 *   the clock: the random choices of a seeded fit (the starting subsets of
 *   FAST-MCD, the k-means++ starts of a mixture, the relabellings of the
 *   robust comparison) are the same on every platform.
 * - Results are bit-identical from run to run, and whatever the number of
 *   application threads calling the library at once, for the same seed, data
 *   and options with the same library build and BLAS library on the same
 *   processor family with the same thread settings. Beyond that they agree to
 *   rounding only: OpenBLAS chooses its kernels per processor at run time and
 *   its sums may depend on its thread count, and a choice that rounding
 *   decides (between two nearly equal subsets or candidates) can then differ.
 */
#ifndef ELLIPSA_H
#define ELLIPSA_H

#include <stddef.h>
#include <stdint.h>

#if defined(ELLIPSA_BUILDING_LIBRARY)
#define ELLIPSA_API __attribute__((visibility("default")))
#else
#define ELLIPSA_API
#endif

#ifdef __cplusplus
extern "C" {
#endif

/* ======================================================================== */
/** @name Version
 *  Compile-time version of this header; ellipsa_version() gives the version of
 *  the library actually loaded, which may differ (see docs/versioning.md).
 *  @{ */
#define ELLIPSA_VERSION_MAJOR 0 /**< Incremented for incompatible changes (docs/versioning.md). */
#define ELLIPSA_VERSION_MINOR 1 /**< Incremented for compatible additions. */
#define ELLIPSA_VERSION_PATCH 0 /**< Incremented for fixes that change no interface. */
/** MAJOR*10000 + MINOR*100 + PATCH. */
#define ELLIPSA_VERSION_NUMBER \
  (ELLIPSA_VERSION_MAJOR * 10000 + ELLIPSA_VERSION_MINOR * 100 + ELLIPSA_VERSION_PATCH)

/**
 * @brief Version of the loaded library as "MAJOR.MINOR.PATCH".
 * @return A static string owned by the library; never NULL. Thread-safe.
 */
ELLIPSA_API const char *ellipsa_version(void);

/**
 * @brief Version of the loaded library as MAJOR*10000 + MINOR*100 + PATCH.
 *
 * Compare with ::ELLIPSA_VERSION_NUMBER to detect a header/library mismatch.
 * Thread-safe.
 * @return The version number.
 */
ELLIPSA_API int32_t ellipsa_version_number(void);
/** @} */

/* ======================================================================== */
/** @name Status codes
 *  Every fallible call returns one of these. Misuse (the caller broke the
 *  contract: 1-9), unusable input or resources (10-19) and numerical outcomes
 *  of a well-formed request (20-29) are separate ranges, so a caller can tell
 *  "fix your code" from "look at your data".
 *  @{ */
/** Status code returned by every fallible call. */
typedef int32_t ellipsa_status;

#define ELLIPSA_OK 0                 /**< Success. */
#define ELLIPSA_ERR_NULL 1           /**< A required pointer argument was NULL. */
#define ELLIPSA_ERR_ARGUMENT 2       /**< A value outside its documented range. */
#define ELLIPSA_ERR_SHAPE 3          /**< Dimensions, strides or lengths that do not fit. */
#define ELLIPSA_ERR_STATE 4          /**< The handle cannot do this in its current state. */
#define ELLIPSA_ERR_DATA 10          /**< Data the method cannot use (too few rows, non-finite values, constant column...). */
#define ELLIPSA_ERR_FORMAT 11        /**< Serialised input that is malformed, inconsistent or of an unknown version. */
#define ELLIPSA_ERR_MEMORY 12        /**< Memory could not be allocated, or a size overflows. */
#define ELLIPSA_ERR_CANCELLED 13     /**< A progress callback asked to stop. */
#define ELLIPSA_ERR_INTERNAL 14      /**< A defect inside ellipsa; please report it with the message. */
#define ELLIPSA_NUM_SINGULAR 20      /**< A scatter matrix is singular or too ill-conditioned to use. */
#define ELLIPSA_NUM_NOT_CONVERGED 21 /**< An iteration failed to converge (a mixture that reaches its EM iteration cap is not this: it is returned with ::ELLIPSA_OK and its "converged" diagnostic 0). */
#define ELLIPSA_NUM_EXACT_FIT 22     /**< MCD: at least h rows lie on a hyperplane. */

/**
 * @brief A short constant name for a status code, e.g. "ELLIPSA_ERR_SHAPE".
 * @param status Any value.
 * @return A static string; never NULL ("ELLIPSA_UNKNOWN_STATUS" for codes this
 *         version does not know). Thread-safe.
 */
ELLIPSA_API const char *ellipsa_status_string(ellipsa_status status);

/**
 * @brief The detailed message of the last failed call on this thread.
 *
 * Every call that returns a status other than ::ELLIPSA_OK sets it, starting
 * with the name of the function that failed; a successful call does not clear
 * it, so read it right after the failing call.
 * @return A string owned by the library, thread-local, never NULL ("" before
 *         any failure). Valid until the next ellipsa call on the same thread.
 */
ELLIPSA_API const char *ellipsa_last_error(void);
/** @} */

/* ======================================================================== */
/** @name Matrix views
 *  @{ */
/**
 * @brief A read-only view of a dense matrix of doubles.
 *
 * Element (i, j) is `data[i * row_stride + j * col_stride]`, strides counted in
 * elements (not bytes). A C row-major array has `row_stride = cols,
 * col_stride = 1`; R, Fortran and spreadsheet columns have `row_stride = 1,
 * col_stride = rows`. Strides must be >= 0; a stride of 0 repeats a row or a
 * column (allowed). The library never writes through a view and never keeps the
 * pointer after the call returns.
 */
typedef struct ellipsa_matrix {
  const double *data; /**< Element (0,0). May be NULL only when rows or cols is 0. */
  int64_t rows;       /**< Number of rows (observations), >= 0. */
  int64_t cols;       /**< Number of columns (variables), >= 0. */
  int64_t row_stride; /**< Elements between (i,j) and (i+1,j). */
  int64_t col_stride; /**< Elements between (i,j) and (i,j+1). */
} ellipsa_matrix;

/**
 * @brief A view of a C row-major array `data[rows][cols]`.
 * @param data First element.
 * @param rows Number of rows.
 * @param cols Number of columns.
 * @return The view (nothing is copied or allocated).
 */
static inline ellipsa_matrix ellipsa_matrix_row_major(const double *data, int64_t rows,
                                                      int64_t cols) {
  ellipsa_matrix m;
  m.data = data;
  m.rows = rows;
  m.cols = cols;
  m.row_stride = cols;
  m.col_stride = 1;
  return m;
}

/**
 * @brief A view of a column-major array (R, Fortran, Julia, spreadsheet ranges).
 * @param data First element.
 * @param rows Number of rows.
 * @param cols Number of columns.
 * @return The view (nothing is copied or allocated).
 */
static inline ellipsa_matrix ellipsa_matrix_col_major(const double *data, int64_t rows,
                                                      int64_t cols) {
  ellipsa_matrix m;
  m.data = data;
  m.rows = rows;
  m.cols = cols;
  m.row_stride = 1;
  m.col_stride = rows;
  return m;
}
/** @} */

/* ======================================================================== */
/** @name Progress and cancellation
 *  @{ */
/**
 * @brief Called by long operations on the thread that called them (never on a
 *        thread of the library's own; see "Threads and reproducibility").
 *
 * @param stage    A short static description of the current stage (e.g.
 *                 "random starts"); never NULL; valid during the call only.
 * @param fraction Progress of the whole operation in [0, 1], non-decreasing.
 * @param user     The pointer given together with the callback.
 * @return 0 to continue; any other value cancels the operation, which then
 *         returns ::ELLIPSA_ERR_CANCELLED and produces no result.
 *
 * How promptly a fit stops: the callback is not called again after it asked
 * to stop, and no further unit of work starts. The units between two calls
 * are at most: FAST-MCD (mcd) one random start with its two C-steps (with
 * more than one thread asked for: 50 starts per thread asked for), or one round of
 * C-steps of the kept candidates (at most ten C-steps); DetMCD its six
 * starting estimates (computed together), their first h-subsets, or one
 * C-step of each start whose C-steps have not converged (the six run in
 * lockstep); MRCD the C-steps of
 * one starting estimate; mixtures one EM iteration
 * (after every second one, also the E-step of an acceleration jump) or the
 * k-means++ seeding of one restart. Each unit costs O(n p^2) (C-step),
 * O(n K p^2) (EM iteration) or, for DetMCD's starting estimates, about
 * p(p+1)/2 robust scale evaluations on n values; the measured wall-clock latency is in
 * docs/robustness.md.
 */
typedef int (*ellipsa_progress_fn)(const char *stage, double fraction, void *user);
/** @} */

/* ======================================================================== */
/** @name Distributions and control limits
 *  Thin, checked access to the distribution functions behind every p-value and
 *  cutoff (Boost.Math underneath). All are thread-safe and allocate nothing.
 *
 *  The F and Beta functions accept degrees of freedom and shapes in
 *  [1e-100, 1e12] (::ELLIPSA_ERR_ARGUMENT outside): beyond it Boost's
 *  incomplete beta may not end or may leave [0, 1], so the range is checked
 *  rather than trusted. Inside it every call ends (milliseconds) with a value
 *  in range. Tail accuracy, measured against R's standalone math library:
 *  within 1e-12 relative (3e-13 measured) while the smaller shape is at most
 *  1e3, which covers the control limits and p-values the library asks for up
 *  to p = 2000 variables (one shape is p/2); beyond,
 *  the error grows with the smaller shape (2e-10 at 1e6, 8e-9 at 1e8, 7e-6 at
 *  1e11). A quantile from Boost is kept when the cdf at it is within 1e-10 of
 *  the probability (relative); otherwise the cdf is searched again.
 *  @{ */
/**
 * @brief Quantile of the chi-square distribution: x with P(X <= x) = probability.
 * @param[out] out         The quantile; written only on success.
 * @param      probability In [0, 1).
 * @param      df          Degrees of freedom, finite and > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL if out is NULL; ::ELLIPSA_ERR_ARGUMENT
 *         for a probability or df outside its range (NaN included).
 */
ELLIPSA_API ellipsa_status ellipsa_chi2_quantile(double *out, double probability, double df);

/**
 * @brief Upper-tail probability P(X > x) of the chi-square distribution.
 *
 * Computed directly, so p-values far below 1e-16 keep their digits.
 * @param[out] out The probability in [0, 1].
 * @param      x   Any value except NaN (x <= 0 gives 1, +inf gives 0).
 * @param      df  Degrees of freedom, finite and > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_chi2_tail(double *out, double x, double df);

/**
 * @brief Quantile of the F distribution with (df1, df2) degrees of freedom.
 * @param[out] out The quantile.
 * @param probability In [0, 1).
 * @param df1 Numerator degrees of freedom, in [1e-100, 1e12].
 * @param df2 Denominator degrees of freedom, in [1e-100, 1e12].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_f_quantile(double *out, double probability, double df1,
                                              double df2);

/**
 * @brief Upper-tail probability P(X > x) of the F distribution.
 * @param[out] out The probability in [0, 1].
 * @param x   Any value except NaN.
 * @param df1 Numerator degrees of freedom, in [1e-100, 1e12].
 * @param df2 Denominator degrees of freedom, in [1e-100, 1e12].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_f_tail(double *out, double x, double df1, double df2);

/**
 * @brief Quantile of the Beta(a, b) distribution.
 * @param[out] out The quantile in [0, 1].
 * @param probability In [0, 1].
 * @param a First shape, in [1e-100, 1e12].
 * @param b Second shape, in [1e-100, 1e12].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_beta_quantile(double *out, double probability, double a,
                                                 double b);

/**
 * @brief Upper-tail probability P(X > x) of the Beta(a, b) distribution.
 * @param[out] out The probability in [0, 1].
 * @param x Any value except NaN.
 * @param a First shape, in [1e-100, 1e12].
 * @param b Second shape, in [1e-100, 1e12].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_beta_tail(double *out, double x, double a, double b);

/** Phase I: the rows that were used to estimate the mean and covariance. */
#define ELLIPSA_PHASE_ONE 1
/** Phase II: new rows scored against an estimate from m other rows. */
#define ELLIPSA_PHASE_TWO 2

/**
 * @brief Upper control limit for Hotelling T^2 of individual observations.
 *
 * Tracy, Young & Mason (1992): with m reference rows and p variables,
 * phase I: UCL = ((m-1)^2/m) * BetaQ(1-alpha; p/2, (m-p-1)/2);
 * phase II: UCL = p(m+1)(m-1) / (m(m-p)) * FQ(1-alpha; p, m-p).
 * The statistic compared with it is the squared Mahalanobis distance under the
 * unbiased (n-1) classical fit of the m reference rows.
 * @param[out] out   The limit.
 * @param phase      ::ELLIPSA_PHASE_ONE or ::ELLIPSA_PHASE_TWO.
 * @param m          Reference rows; phase I needs m > p + 1, phase II m > p.
 *                   Above 1e12 rows both phases give the large-sample limit,
 *                   the chi-square quantile with p degrees of freedom (the
 *                   exact limits differ from it by a relative O(p/m)).
 * @param p          Variables, >= 1.
 * @param alpha      False-alarm probability per row, in (0, 1).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT for an unknown
 *         phase, alpha outside (0,1) or m too small for p.
 */
ELLIPSA_API ellipsa_status ellipsa_hotelling_limit(double *out, int32_t phase, int64_t m,
                                                   int64_t p, double alpha);
/** @} */

/* ======================================================================== */
/** @name Fit options
 *  An ::ellipsa_fit_options handle says how to fit: the method and its
 *  settings. Create one, set what differs from the defaults, pass it to
 *  ellipsa_model_fit(), reuse it or destroy it. Setters need the handle to
 *  themselves; ellipsa_model_fit() only reads it, so concurrent fits may
 *  share it (see "Threads and reproducibility" at the top: its progress
 *  callback is then called from each fitting thread). A setter whose setting the
 *  handle's method does not use (a seed for detmcd, components for classical)
 *  returns ::ELLIPSA_ERR_ARGUMENT and names the methods it applies to.
 *  @{ */
/** Opaque fit options. */
typedef struct ellipsa_fit_options ellipsa_fit_options;

/** Estimation method. */
typedef int32_t ellipsa_method;
#define ELLIPSA_METHOD_CLASSICAL 1   /**< Sample mean and covariance ("classical"). */
#define ELLIPSA_METHOD_LEDOIT_WOLF 2 /**< Ledoit & Wolf (2004) shrinkage ("ledoit-wolf"). */
#define ELLIPSA_METHOD_OAS 3         /**< Oracle approximating shrinkage, Chen et al. (2010) ("oas"). */
#define ELLIPSA_METHOD_MCD 4         /**< FAST-MCD, Rousseeuw & Van Driessen (1999) ("mcd"). */
#define ELLIPSA_METHOD_DETMCD 5      /**< Deterministic MCD, Hubert et al. (2012) ("detmcd"); its robust scale is Qn up to 10000 rows, the O(n) tau scale (Yohai & Zamar 1988) beyond. */
#define ELLIPSA_METHOD_MRCD 6        /**< Regularised MCD, Boudt et al. (2020) ("mrcd"). */
#define ELLIPSA_METHOD_MIXTURE 7     /**< Gaussian mixture by EM ("mixture"), accelerated by SQUAREM (Varadhan & Roland 2008), a jump kept only when it does not lower the log-likelihood; see ellipsa_fit_options_set_restarts() for how the starts compete. */

/** Divisor of a classical covariance. */
#define ELLIPSA_DIVISOR_N 1          /**< Divide by n: the maximum-likelihood estimate. */
#define ELLIPSA_DIVISOR_N_MINUS_1 2  /**< Divide by n-1: the unbiased estimate (default). */

/** What fitting does with rows that contain NaN. */
#define ELLIPSA_MISSING_DROP_ROWS 1  /**< Use complete rows only and count the others (default). */
#define ELLIPSA_MISSING_REFUSE 2     /**< Fail with ::ELLIPSA_ERR_DATA at the first NaN. */
#define ELLIPSA_MISSING_EM 3         /**< Mixtures only: EM over the missing coordinates. */

/** Covariance structure of mixture components. */
#define ELLIPSA_STRUCTURE_FULL 1      /**< One full matrix per component. */
#define ELLIPSA_STRUCTURE_DIAGONAL 2  /**< One diagonal matrix per component. */
#define ELLIPSA_STRUCTURE_TIED 3      /**< One full matrix shared by all components. */
#define ELLIPSA_STRUCTURE_SPHERICAL 4 /**< One variance per component. */
#define ELLIPSA_STRUCTURE_ALL 5       /**< Model choice: try all four. */

/**
 * @brief The name of a covariance structure: "full", "diagonal", "tied", "spherical", "all".
 *
 * These are the names of the model file, the batch tool's `--structure` and
 * the bindings.
 * @param structure An ELLIPSA_STRUCTURE_ value.
 * @return A static string; "unknown" for a value this version does not know. Thread-safe.
 */
ELLIPSA_API const char *ellipsa_structure_name(int32_t structure);

/**
 * @brief The covariance structure with the given name (as ellipsa_structure_name() writes it).
 * @param[out] out The ELLIPSA_STRUCTURE_ value.
 * @param name     NUL-terminated name.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (unknown name;
 *         the message lists the names). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_structure_from_name(int32_t *out, const char *name);

/**
 * @brief The name of a missing-value policy: "drop", "refuse", "em".
 * @param policy An ELLIPSA_MISSING_ value.
 * @return A static string; "unknown" for a value this version does not know. Thread-safe.
 */
ELLIPSA_API const char *ellipsa_missing_name(int32_t policy);

/**
 * @brief The missing-value policy with the given name (as ellipsa_missing_name() writes it).
 * @param[out] out The ELLIPSA_MISSING_ value.
 * @param name     NUL-terminated name.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (unknown name;
 *         the message lists the names). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_missing_from_name(int32_t *out, const char *name);

/**
 * @brief Creates fit options for a method, every other setting at its default.
 *
 * Defaults: divisor n-1 (classical), missing rows dropped, alpha 0.5 (MCD
 * family: h = floor((n+p+1)/2)), seed 0, components 1..1, structure full,
 * restarts 5, at most 500 EM iterations, relative log-likelihood tolerance 1e-6,
 * regularisation 1e-6 (mixtures), no progress callback.
 * @param[out] out The new handle; destroy it with ellipsa_fit_options_destroy().
 * @param method One of the ELLIPSA_METHOD_ values.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT for an unknown
 *         method; ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_create(ellipsa_fit_options **out,
                                                      ellipsa_method method);

/**
 * @brief Destroys fit options; NULL is a no-op.
 * @param options The handle, or NULL.
 */
ELLIPSA_API void ellipsa_fit_options_destroy(ellipsa_fit_options *options);

/**
 * @brief The method whose name (as the CLI spells it, e.g. "ledoit-wolf") is given.
 * @param[out] out The method.
 * @param name NUL-terminated name: classical, ledoit-wolf, oas, mcd, detmcd, mrcd, mixture.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT for an unknown name.
 */
ELLIPSA_API ellipsa_status ellipsa_method_from_name(ellipsa_method *out, const char *name);

/**
 * @brief The name of a method ("classical", "ledoit-wolf", ...).
 * @param method An ELLIPSA_METHOD_ value.
 * @return A static string; "unknown" for a value this version does not know.
 */
ELLIPSA_API const char *ellipsa_method_name(ellipsa_method method);

/**
 * @brief Divisor of the classical covariance: ::ELLIPSA_DIVISOR_N or ::ELLIPSA_DIVISOR_N_MINUS_1.
 * @param options The options.
 * @param divisor ::ELLIPSA_DIVISOR_N or ::ELLIPSA_DIVISOR_N_MINUS_1.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (another
 *         value, or a method other than classical).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_divisor(ellipsa_fit_options *options,
                                                           int32_t divisor);

/**
 * @brief What to do with rows that contain NaN (ELLIPSA_MISSING_ values).
 *
 * ::ELLIPSA_MISSING_EM is accepted for ::ELLIPSA_METHOD_MIXTURE only.
 * Infinite values are never "missing": fitting refuses them with ::ELLIPSA_ERR_DATA.
 * @param options The options.
 * @param policy  ::ELLIPSA_MISSING_DROP_ROWS, ::ELLIPSA_MISSING_REFUSE or ::ELLIPSA_MISSING_EM.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (an unknown
 *         policy, or ::ELLIPSA_MISSING_EM for a method other than mixture).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_missing(ellipsa_fit_options *options,
                                                           int32_t policy);

/**
 * @brief Names of the columns, carried into the model (and its file).
 *
 * Without names the columns are called "x1", "x2", ... The strings are copied.
 * The count must equal the number of data columns at fit time.
 * @param options The options.
 * @param names   count NUL-terminated UTF-8 strings, none NULL.
 * @param count   Number of names, >= 1.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (options, names or one name);
 *         ::ELLIPSA_ERR_ARGUMENT (count < 1); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_column_names(ellipsa_fit_options *options,
                                                                const char *const *names,
                                                                int64_t count);

/**
 * @brief MCD family: the fraction alpha in [0.5, 1] that sets h.
 *
 * MCD and DetMCD: h = floor(2*floor((n+p+1)/2) - n + 2*(n - floor((n+p+1)/2))*alpha);
 * 0.5 (the default) gives the highest breakdown point, 1 uses every row.
 * MRCD: h = ceil(alpha*n), default 0.75 (Boudt et al. 2020) until set.
 * @param options The options.
 * @param alpha   In [0.5, 1].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (outside
 *         [0.5, 1], or a method other than mcd, detmcd and mrcd).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_alpha(ellipsa_fit_options *options,
                                                         double alpha);

/**
 * @brief Seed of the methods that draw random numbers (mcd, i.e. FAST-MCD, and mixture).
 *
 * What a seed guarantees is stated once, under "Threads and reproducibility"
 * at the top of this header.
 * @param options The options.
 * @param seed    Any 64-bit value.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (a method
 *         other than mcd and mixture: the others draw no random numbers; the
 *         message names the methods a seed applies to).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_seed(ellipsa_fit_options *options,
                                                        uint64_t seed);

/**
 * @brief Mixtures: the range of component counts to try, 1 <= k_min <= k_max.
 *
 * With k_min < k_max (or structure ::ELLIPSA_STRUCTURE_ALL) every candidate is
 * fitted and the one with the lowest BIC is kept; the whole table is available
 * from ellipsa_model_selection().
 * @param options The options.
 * @param k_min   Smallest K, >= 1.
 * @param k_max   Largest K, >= k_min, <= 100.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (a range
 *         outside these bounds, or a method other than mixture).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_components(ellipsa_fit_options *options,
                                                              int32_t k_min, int32_t k_max);

/**
 * @brief Mixtures: covariance structure (ELLIPSA_STRUCTURE_ values).
 * @param options   The options.
 * @param structure An ELLIPSA_STRUCTURE_ value.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (an unknown
 *         structure, or a method other than mixture).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_structure(ellipsa_fit_options *options,
                                                             int32_t structure);

/**
 * @brief Mixtures: number of EM runs from different k-means++ starts (>= 1).
 *
 * With more than one start, every start runs a short EM (until an iteration
 * gains at most 0.3% of what the start has gained since its first iteration)
 * and the start of highest log-likelihood goes on to the tolerance: the
 * em-EM strategy of Biernacki, Celeux & Govaert (2003). With one start, that
 * start runs to the tolerance.
 * @param options  The options.
 * @param restarts Number of starts, in [1, 10000].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (outside
 *         [1, 10000], or a method other than mixture).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_restarts(ellipsa_fit_options *options,
                                                            int32_t restarts);

/**
 * @brief FAST-MCD (method mcd): the number of random starts, in [1, 100000] (default 500).
 *
 * Each start is a random (p+1)-subset refined by two C-steps; the best ten
 * go on to C-steps to convergence (Rousseeuw & Van Driessen 1999, who use
 * 500). Fewer starts are faster and more likely to miss the subset of lowest
 * determinant when outliers are many; the starts are drawn from the seed, so
 * a fit stays reproducible for any count. The nested scheme (more than 600
 * rows) divides the starts among its groups.
 * @param options The options.
 * @param starts  Number of random starts, in [1, 100000].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (outside
 *         [1, 100000], or a method other than mcd).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_starts(ellipsa_fit_options *options,
                                                          int32_t starts);

/**
 * @brief Mixtures: EM iteration cap (>= 1) and relative log-likelihood tolerance (> 0).
 *
 * The MCD family's C-steps have fixed caps and are not set here.
 * @param options        The options.
 * @param max_iterations Iteration cap, >= 1.
 * @param tolerance      Relative change below which an iteration stops, finite and > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (a value out
 *         of range, or a method other than mixture).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_iterations(ellipsa_fit_options *options,
                                                              int32_t max_iterations,
                                                              double tolerance);

/**
 * @brief Mixtures: ridge added to every covariance diagonal, relative to the
 *        variance of each column of the data (>= 0; default 1e-6).
 *
 * After each M-step, diagonal entry j of every component covariance gets
 * `relative` times the variance of column j over the rows used (divisor
 * their count), so a change of the units of one column changes only that
 * column's ridge: full, diagonal and tied mixtures are equivariant under
 * column scaling (means and covariances follow the units, memberships are
 * unchanged). Two cases take `relative` times the mean of the column
 * variances instead: a constant column (accepted only under the diagonal
 * and spherical structures with `relative` > 0), and every column under the
 * spherical structure, whose one variance per component already treats the
 * columns as one unit.
 * @param options  The options.
 * @param relative Multiple of each column's variance, finite and >= 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (negative
 *         or not finite, or a method other than mixture).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_regularisation(ellipsa_fit_options *options,
                                                                  double relative);

/**
 * @brief A progress callback for ellipsa_model_fit() (NULL removes it).
 * @param options  The options.
 * @param callback Called on the thread that called ellipsa_model_fit(), during that
 *                 call, or NULL. Options shared by concurrent fits call it from
 *                 each of their threads, possibly at once.
 * @param user     Passed to the callback unchanged; not dereferenced by the library.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (options).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_progress(ellipsa_fit_options *options,
                                                            ellipsa_progress_fn callback,
                                                            void *user);

/**
 * @brief A memory ceiling for ellipsa_model_fit(): a fit whose estimated
 *        working memory (ellipsa_fit_memory_estimate()) exceeds it is refused
 *        before anything that grows with the data is allocated.
 *
 * With 0 (the default) the ceiling is the environment variable
 * `ELLIPSA_MEMORY_LIMIT`, read at each fit: a whole number of bytes,
 * optionally followed by K, M or G (multiples of 1024, 1024^2, 1024^3); unset,
 * empty or 0 means no ceiling. A limit set here takes precedence over the
 * variable. The refused fit returns ::ELLIPSA_ERR_MEMORY with a message that
 * gives the estimate, the ceiling and where the ceiling was set. The estimate
 * covers the library's own allocations beyond the caller's data; OpenBLAS's
 * thread buffers (allocated once per process) are not counted.
 * @param options The options.
 * @param bytes   The ceiling in bytes, >= 0 (0: `ELLIPSA_MEMORY_LIMIT` or none).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (negative).
 *         ellipsa_model_fit() returns ::ELLIPSA_ERR_ARGUMENT when the limit is 0
 *         and `ELLIPSA_MEMORY_LIMIT` is set to anything else than described.
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_memory_limit(ellipsa_fit_options *options,
                                                                int64_t bytes);

/**
 * @brief The working memory, in bytes, that ellipsa_model_fit() estimates for
 *        a fit of rows x cols data with these options, and compares with the
 *        ceiling (ellipsa_fit_options_set_memory_limit()).
 *
 * An upper bound of what the fit allocates beyond the caller's data, computed
 * from n (rows), p (cols), K (the largest number of components), the thread
 * count T and the method only, in 8-byte words, plus a fixed 1 MiB:
 * - every method: the copy of the complete rows, row lists and the model:
 *   n p + 3 n + 6 p^2;
 * - classical, ledoit-wolf, oas: T (2 min(n, 4096) p + p^2) + ceil(n / 4096) (p^2 + 2 p) + 8 p^2;
 * - mcd (FAST-MCD): 4 n p + 2 min(n, 1500) p + 40 (n + 2 p^2) + 12 n;
 * - detmcd: 15 n p + 30 p^2 + 20 n;
 * - mrcd: 6 n p + 20 p^2 + 20 n;
 * - mixture: 2 n p + 8 n K + 8 K p^2 + 4 K p + 10 n, and with
 *   ::ELLIPSA_MISSING_EM another 2 n p + n + 4 K p^2.
 * The factors were checked against the measured peak of each method
 * (tests/alloc/test_memory_estimate.cpp). The computation is checked for
 * overflow: sizes whose product overflows a 64-bit integer are refused.
 * @param[out] bytes The estimate; written only on success.
 * @param options    The options of the fit (method, components, missing-value
 *                   policy, threads).
 * @param rows       n, >= 0.
 * @param cols       p, >= 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (negative
 *         sizes); ::ELLIPSA_ERR_ARGUMENT (threads 0 with `ELLIPSA_THREADS` set
 *         to anything but a whole number in [1, 256]); ::ELLIPSA_ERR_MEMORY (the
 *         estimate overflows a 64-bit integer). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_fit_memory_estimate(int64_t *bytes,
                                                       const ellipsa_fit_options *options,
                                                       int64_t rows, int64_t cols);

/**
 * @brief MCD and DetMCD: switch the small-sample factors of the scatter on (1, the default) or off (0).
 *
 * The Croux-Haesbroeck factor makes the MCD scatter consistent as n grows; on
 * small samples the raw and reweighted scatter still come out too small, and
 * too many clean rows are flagged. The small-sample factors (fitted in this
 * project by simulation, by the method of Pison, Van Aelst & Willems 2002;
 * docs/calibration.md) remove that bias. Off reproduces the scatter of
 * ellipsa 0.1.0. The factors used are reported by ellipsa_model_diagnostic()
 * ("small_sample_raw", "small_sample_reweighted").
 * @param options The options.
 * @param on      1 (apply, default) or 0 (leave out).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (on not 0 or 1, or a
 *         method other than mcd and detmcd).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_small_sample(ellipsa_fit_options *options,
                                                                int32_t on);

/** ellipsa_fit_options_set_consistency(): the Croux-Haesbroeck factor, exact
 *  for a normal bulk, times the small-sample factors. The default. */
#define ELLIPSA_CONSISTENCY_NORMAL 0
/** ellipsa_fit_options_set_consistency(): the median rule of Rousseeuw & Van
 *  Driessen (1999), raw scatter times med(d^2) / chi2q(p, 0.5). */
#define ELLIPSA_CONSISTENCY_MEDIAN 1

/**
 * @brief MCD and DetMCD: how the raw scatter (the covariance of the h-subset) is scaled to the whole bulk.
 *
 * ::ELLIPSA_CONSISTENCY_NORMAL (default) multiplies it by the Croux-Haesbroeck
 * factor and the small-sample factor (ellipsa_fit_options_set_small_sample()):
 * right for a normal bulk. ::ELLIPSA_CONSISTENCY_MEDIAN multiplies it by the
 * median of all rows' squared distances over the chi-square median
 * (Rousseeuw & Van Driessen 1999), so that half of the rows lie inside the
 * median ellipsoid whatever the bulk's shape; the raw small-sample factor is
 * then not applied (the reweighted one is). The reweighting and the scoring
 * reference are the same under both rules. The measured flag rates of both
 * rules on normal and non-normal bulks, and why the default is the default,
 * are in docs/calibration.md. The factor used is the diagnostic
 * "consistency_factor"; the rule is the diagnostic "consistency_rule" (0 or
 * 1) and is stored in the model file.
 * @param options The options.
 * @param rule    ::ELLIPSA_CONSISTENCY_NORMAL or ::ELLIPSA_CONSISTENCY_MEDIAN.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (an unknown rule, or a
 *         method other than mcd and detmcd).
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_consistency(ellipsa_fit_options *options,
                                                               int32_t rule);

/**
 * @brief Gaussian methods: the scoring reference the model records (see ::ELLIPSA_REFERENCE_NEW_ROWS).
 *
 * ellipsa_model_score() and ellipsa_model_score_v2() with
 * ::ELLIPSA_REFERENCE_MODEL use the recorded reference. Default: the
 * new-rows reference when the fit has enough rows for it (more rows than
 * p + 1; mcd and detmcd count the rows kept by the reweighting), otherwise the
 * chi-square; mrcd records the chi-square. The choice and its evidence are in
 * docs/calibration.md.
 * @param options   The options.
 * @param reference ::ELLIPSA_REFERENCE_CHI2, ::ELLIPSA_REFERENCE_NEW_ROWS or
 *                  ::ELLIPSA_REFERENCE_FITTING_ROWS.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (unknown
 *         reference, or a mixture, whose flags use the chi-square only).
 *         ellipsa_model_fit() then returns ::ELLIPSA_ERR_DATA when the fit has
 *         too few rows for the reference chosen.
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_reference(ellipsa_fit_options *options,
                                                             int32_t reference);
/** @} */

/* ======================================================================== */
/** @name Fitting
 *  @{ */
/** Opaque fitted model: read-only after creation, shareable between threads. */
typedef struct ellipsa_model ellipsa_model;

/**
 * @brief Fits a model to the rows of data.
 *
 * Rows with NaN are handled as the options say (default: dropped and counted,
 * see ellipsa_model_rows()). Infinite values are refused. The data are read
 * during the call only.
 *
 * Mixtures: a range of K (or several structures) is a model choice; a
 * candidate that cannot be fitted (K above the number of rows, fewer rows than
 * its parameters, components that collapse) is recorded with its reason
 * (ellipsa_candidate_explain()) and the best of the others is kept; only when
 * no candidate can be fitted does the call fail (::ELLIPSA_ERR_DATA, the
 * message gives the first candidate's reason). An EM run that reaches the
 * iteration cap (ellipsa_fit_options_set_iterations()) before its tolerance
 * is still a fit: the call returns ::ELLIPSA_OK, the model's "converged"
 * diagnostic is 0 and each candidate's `converged` says which ones stopped at
 * the cap.
 *
 * @param[out] out     The fitted model; destroy it with ellipsa_model_destroy().
 *                     Set to NULL on failure.
 * @param data         n x p view; p >= 1. Classical fits need n > p complete rows
 *                     (shrinkage works for any p with n >= 2); the MCD and DetMCD
 *                     need n > p (MRCD is for n <= p); mixtures need more complete
 *                     rows than parameters.
 * @param options      How to fit; not modified.
 * @return ::ELLIPSA_OK;
 *   ::ELLIPSA_ERR_NULL (out, data, options or data->data with a non-empty shape);
 *   ::ELLIPSA_ERR_SHAPE (no columns, negative sizes or strides, column names
 *     that do not match p, rows*cols overflowing);
 *   ::ELLIPSA_ERR_DATA (too few complete rows, an infinite value, an all-missing
 *     or constant column: the message names the column; mixtures: no candidate
 *     of the model choice could be fitted; too few rows for the scoring
 *     reference set with ellipsa_fit_options_set_reference());
 *   ::ELLIPSA_NUM_SINGULAR (a covariance that is not positive definite: the
 *     message names the columns involved and suggests shrinkage);
 *   ::ELLIPSA_NUM_EXACT_FIT (MCD: at least h rows on a hyperplane; the message
 *     gives the hyperplane);
 *   ::ELLIPSA_NUM_NOT_CONVERGED (only when the eigen-decomposition that names
 *     the columns of a singular scatter fails; a mixture that reaches its
 *     iteration cap is returned with ::ELLIPSA_OK, see above);
 *   ::ELLIPSA_ERR_CANCELLED (the progress callback returned non-zero: the
 *     fit stops at the next check, nothing is kept and nothing leaks);
 *   ::ELLIPSA_ERR_MEMORY (an allocation failed; the estimated working memory
 *     exceeds the ceiling of ellipsa_fit_options_set_memory_limit() or
 *     `ELLIPSA_MEMORY_LIMIT`, checked before the fit allocates; or the
 *     estimate overflows); ::ELLIPSA_ERR_ARGUMENT (`ELLIPSA_THREADS` or
 *     `ELLIPSA_MEMORY_LIMIT` set to an unreadable value).
 * Thread-safe for distinct options handles and for one handle shared by
 * concurrent fits (its progress callback is then called from each of them).
 */
ELLIPSA_API ellipsa_status ellipsa_model_fit(ellipsa_model **out, const ellipsa_matrix *data,
                                             const ellipsa_fit_options *options);

/**
 * @brief Destroys a model; NULL is a no-op. Scores and copies already made stay valid.
 * @param model The model, or NULL.
 */
ELLIPSA_API void ellipsa_model_destroy(ellipsa_model *model);
/** @} */

/* ======================================================================== */
/** @name Streaming fits
 *  A classical or shrinkage fit in one pass over data that arrive in pieces:
 *  chunks of a file, threads, or machines. Each piece is added to an
 *  accumulator (mean and centred cross-products, merged by the update of Chan,
 *  Golub & LeVeque 1979, and the power sums of the row norms that the
 *  Ledoit-Wolf intensity needs, moved to the merged mean the same way);
 *  accumulators of disjoint pieces merge exactly; the model is made at the end.
 *  Memory is O(p^2) whatever the number of rows. An accumulator being added
 *  to is used by one thread at a time; one that is only read may be shared
 *  (see "Threads and reproducibility" at the top).
 *  @{ */
/** Opaque streaming accumulator of mean, cross-products and norm power sums. */
typedef struct ellipsa_accumulator ellipsa_accumulator;

/**
 * @brief Creates an empty accumulator for rows of p columns.
 * @param[out] out The handle; destroy it with ellipsa_accumulator_destroy().
 * @param p        Number of columns, 1 <= p <= 100000.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (p); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_create(ellipsa_accumulator **out, int64_t p);

/**
 * @brief Destroys an accumulator; NULL is a no-op.
 * @param accumulator The handle, or NULL.
 */
ELLIPSA_API void ellipsa_accumulator_destroy(ellipsa_accumulator *accumulator);

/**
 * @brief Adds the rows of a view.
 *
 * Rows with a NaN are not added; they are counted (see
 * ellipsa_accumulator_rows()). An infinite value refuses the whole call with
 * ::ELLIPSA_ERR_DATA and adds nothing.
 * @param accumulator The accumulator.
 * @param rows        n x p view (any strides), n >= 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (column count,
 *         negative sizes or strides); ::ELLIPSA_ERR_DATA (an infinite value);
 *         ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_add(ellipsa_accumulator *accumulator,
                                                   const ellipsa_matrix *rows);

/**
 * @brief Adds everything another accumulator holds (its rows and its count of
 *        rows skipped), as if its rows had been added here.
 * @param into The accumulator that grows.
 * @param from An accumulator of the same p; not modified; may not be into.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (p differs);
 *         ::ELLIPSA_ERR_ARGUMENT (into == from).
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_merge(ellipsa_accumulator *into,
                                                     const ellipsa_accumulator *from);

/**
 * @brief Rows added so far, and rows skipped for missing values.
 * @param[out] added   Rows added, or NULL.
 * @param[out] skipped Rows skipped (a NaN), or NULL.
 * @param accumulator  The accumulator.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (accumulator).
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_rows(int64_t *added, int64_t *skipped,
                                                    const ellipsa_accumulator *accumulator);

/**
 * @brief Writes the whole state of an accumulator as bytes, to store it or to
 *        send it to another process, where ellipsa_accumulator_load() rebuilds it.
 *
 * The bytes are a versioned binary format, the same on every machine
 * (little-endian; doubles as their IEEE 754 bits): an 8-byte magic
 * "ELLACCUM", the format version (uint32, now 1), a reserved uint32 0, the
 * total length (uint64), the payload, and an FNV-1a 64-bit checksum of every
 * byte before it (uint64); docs/distributed.md gives the payload. The round
 * trip is exact: a loaded accumulator gives the same bits as the saved one
 * under the same later adds, merges and ellipsa_model_from_accumulator(), so
 * processes that merge accumulators in a fixed order get the model of one
 * process merging the same pieces in that order. Size: 8 (p (p + 1) / 2 +
 * 5 p + 13) bytes; a p over a few thousand needs much memory.
 * @param[out] bytes   The bytes (binary, not NUL-terminated), allocated by the
 *                     library; free them with ellipsa_text_free().
 * @param[out] length  Number of bytes.
 * @param accumulator  The accumulator (not modified).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_MEMORY.
 * Thread-safe for distinct accumulators (and one read by several threads).
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_save(char **bytes, int64_t *length,
                                                    const ellipsa_accumulator *accumulator);

/**
 * @brief Rebuilds an accumulator from bytes written by ellipsa_accumulator_save().
 *
 * Everything is checked before anything is used: the magic, the format
 * version (a newer one than this library reads is refused), the length stated
 * in the header against the length given (truncated or extended bytes), the
 * checksum (changed bytes), p in [1, 100000] and the payload size it implies,
 * finite numbers, and counts that fit together (weight equal to the row
 * count, non-negative sums of squares).
 * @param[out] out  The accumulator, or NULL on failure; destroy it with
 *                  ellipsa_accumulator_destroy().
 * @param bytes     The bytes.
 * @param length    Number of bytes, > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (length);
 *         ::ELLIPSA_ERR_FORMAT (the message says which check failed);
 *         ::ELLIPSA_ERR_MEMORY. Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_load(ellipsa_accumulator **out, const char *bytes,
                                                    int64_t length);

/**
 * @brief Makes a classical or shrinkage Gaussian model from an accumulator.
 *
 * Equal, to rounding, to ellipsa_model_fit() with the same options on all the
 * rows added (the row numbers of skipped rows are not known here, so the
 * model's dropped-row set is empty while its dropped count is right).
 * @param[out] out      The model, or NULL on failure.
 * @param accumulator   The accumulator (not modified; may be added to later).
 * @param options       Options of method ::ELLIPSA_METHOD_CLASSICAL (divisor,
 *                      column names), ::ELLIPSA_METHOD_LEDOIT_WOLF or
 *                      ::ELLIPSA_METHOD_OAS (column names); other methods give
 *                      ::ELLIPSA_ERR_ARGUMENT.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT;
 *         ::ELLIPSA_ERR_SHAPE (column names that do not match p);
 *         ::ELLIPSA_ERR_DATA (classical: fewer than p + 1 rows or a constant
 *         column; shrinkage: fewer than 2 rows or every column constant;
 *         rows were skipped for missing values and the options' missing-value
 *         policy is ::ELLIPSA_MISSING_REFUSE);
 *         ::ELLIPSA_NUM_SINGULAR (classical: collinear columns, named in the
 *         message).
 */
ELLIPSA_API ellipsa_status ellipsa_model_from_accumulator(ellipsa_model **out,
                                                          const ellipsa_accumulator *accumulator,
                                                          const ellipsa_fit_options *options);
/** @} */

/* ======================================================================== */
/** @name Iterative fits from statistics (distributed drivers)
 *  The steps of the mixture EM and of the FAST-MCD C-steps as statistics of
 *  pieces of the rows that merge exactly, so that a driver holding the rows
 *  in several processes (bindings-c/mpi, docs/distributed.md) runs the same
 *  iterations as one process: per iteration, each process adds its rows, the
 *  statistics travel as bytes and merge, and the next estimate is made from
 *  the merged statistics. Nothing here communicates; sizes depend on p and K,
 *  never on the number of rows.
 *  @{ */

/** Flag level of the log-density cutoff of mixtures: a fitted mixture flags
 *  the rows whose log-density lies below the lower ELLIPSA_MIXTURE_CUTOFF_TAIL
 *  quantile of its fitting rows' log-densities (Hyndman & Fan 1996,
 *  definition 7: with m rows sorted ascending v_0..v_(m-1), h = (m-1) tail,
 *  cutoff v_floor(h) + (h - floor(h)) (v_(floor(h)+1) - v_floor(h))). */
#define ELLIPSA_MIXTURE_CUTOFF_TAIL 0.025
/** Level of the MCD reweighting step: rows whose squared distance under the
 *  raw estimate is at most chi2q(p, ELLIPSA_MCD_REWEIGHT_LEVEL) are kept. */
#define ELLIPSA_MCD_REWEIGHT_LEVEL 0.975

/** Opaque E-step statistics of a mixture under given parameters. */
typedef struct ellipsa_em_statistics ellipsa_em_statistics;

/**
 * @brief Creates empty E-step statistics under the parameters of a mixture model.
 *
 * Adding rows (ellipsa_em_statistics_add()) computes their responsibilities
 * under these parameters (the E-step of ellipsa_model_fit()) and accumulates,
 * per component, the responsibility-weighted count, mean and centred
 * cross-products, the plain mean and cross-products of the rows, the
 * log-likelihood and sum t log t. The handle keeps a copy of the parameters.
 * @param[out] out    The statistics, or NULL on failure; destroy them with
 *                    ellipsa_em_statistics_destroy().
 * @param parameters  A mixture model (::ELLIPSA_KIND_MIXTURE): fitted, loaded
 *                    from a file, or made by ellipsa_em_statistics_m_step().
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (not a
 *         mixture model); ::ELLIPSA_NUM_SINGULAR (a component's covariance is
 *         not positive definite); ::ELLIPSA_ERR_MEMORY. Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_create(ellipsa_em_statistics **out,
                                                        const ellipsa_model *parameters);

/**
 * @brief Destroys E-step statistics; NULL is a no-op.
 * @param statistics The handle, or NULL.
 */
ELLIPSA_API void ellipsa_em_statistics_destroy(ellipsa_em_statistics *statistics);

/**
 * @brief Adds rows: their E-step under the handle's parameters, accumulated.
 *
 * Complete rows only: a row with a NaN is skipped and counted
 * (ellipsa_em_statistics_summary()); EM over missing coordinates is not
 * available from statistics. An infinite value refuses the whole call with
 * nothing added. The result does not depend on how rows are split into calls
 * beyond rounding, nor on the thread count (`ELLIPSA_THREADS`).
 * @param statistics The statistics (used by one thread at a time).
 * @param rows       n x p view, p the parameters' dimension; n may be 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (column
 *         count, negative sizes or strides); ::ELLIPSA_ERR_DATA (an infinite
 *         value: the message names its chunk row and column);
 *         ::ELLIPSA_ERR_ARGUMENT (`ELLIPSA_THREADS` malformed);
 *         ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_add(ellipsa_em_statistics *statistics,
                                                     const ellipsa_matrix *rows);

/**
 * @brief Adds everything other statistics hold (exact merge of the moments).
 * @param into  The statistics that grow.
 * @param from  Statistics under the same parameters (bit for bit: a
 *              fingerprint of the parameters is compared); not modified; not into.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (same
 *         handle, or other parameters).
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_merge(ellipsa_em_statistics *into,
                                                       const ellipsa_em_statistics *from);

/**
 * @brief Log-likelihood of the rows added under the parameters, and row counts.
 * @param[out] log_likelihood Sum of the rows' log-densities under the mixture, or NULL.
 * @param[out] rows           Complete rows added, or NULL.
 * @param[out] skipped        Rows skipped for a NaN, or NULL.
 * @param statistics          The statistics.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (statistics).
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_summary(double *log_likelihood, int64_t *rows,
                                                         int64_t *skipped,
                                                         const ellipsa_em_statistics *statistics);

/**
 * @brief Writes the statistics as bytes (without the parameters), to send
 *        them to another process.
 *
 * Frame as ellipsa_accumulator_save() with magic `ELLEMSTA`, version 1;
 * payload (docs/distributed.md): K, p, skipped rows, a 64-bit fingerprint of
 * the parameters, the log-likelihood and sum t log t, then K + 1 moment
 * blocks of 8 (4 + 2 p + p (p + 1) / 2) bytes each: in all
 * 8 (6 + (K + 1)(4 + 2 p + p (p + 1) / 2)) + 32 bytes, whatever the rows.
 * @param[out] bytes   A buffer owned by the caller: free it with ellipsa_text_free().
 * @param[out] length  Its length in bytes.
 * @param statistics   The statistics (not modified).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_MEMORY. Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_save(char **bytes, int64_t *length,
                                                      const ellipsa_em_statistics *statistics);

/**
 * @brief Rebuilds statistics from bytes of ellipsa_em_statistics_save(), under
 *        the parameters they were computed under.
 *
 * Checks the frame as ellipsa_accumulator_load() does, K and p against the
 * parameters, the fingerprint of the parameters, finite numbers and counts
 * that fit together (responsibilities summing to the row count).
 * @param[out] out      The statistics, or NULL on failure.
 * @param bytes         The bytes.
 * @param length        Number of bytes, > 0.
 * @param parameters    The mixture model the statistics were computed under.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (length;
 *         not a mixture model); ::ELLIPSA_ERR_FORMAT (the message names the
 *         failed check, including "computed under other parameters");
 *         ::ELLIPSA_NUM_SINGULAR (as ellipsa_em_statistics_create());
 *         ::ELLIPSA_ERR_MEMORY. Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_load(ellipsa_em_statistics **out, const char *bytes,
                                                      int64_t length, const ellipsa_model *parameters);

/**
 * @brief The M-step: the next parameters from merged statistics.
 *
 * The M-step of ellipsa_model_fit() (the same code): weights, means and
 * covariances of the parameters' structure (full, diagonal, tied or
 * spherical), plus the ridge of ellipsa_fit_options_set_regularisation()
 * computed from the column variances of the rows added. A component that
 * collapses (effective rows below p + 1 for full, 2 for diagonal and
 * spherical, 1 for tied, or a covariance that is not positive definite) is
 * an error here, where ellipsa_model_fit() re-seeds it at the
 * worst-explained row: re-seeding needs the rows. The model made is a mixture
 * model whose log_likelihood, bic and icl diagnostics are those of the
 * statistics (the previous parameters), converged 0; it serves as the
 * parameters of the next iteration (ellipsa_model_save() carries it to other
 * processes exactly).
 * @param[out] next     The next parameters, or NULL on failure.
 * @param statistics    Merged statistics of all rows.
 * @param options       Method ::ELLIPSA_METHOD_MIXTURE, the parameters'
 *                      structure, the regularisation; column names, when
 *                      set, replace those of the parameters.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (another
 *         method or structure, missing-value policy em); ::ELLIPSA_ERR_SHAPE
 *         (column names that do not match p); ::ELLIPSA_ERR_DATA (fewer rows
 *         than free parameters, a column without spread that the
 *         regularisation cannot stand in for, as ellipsa_model_fit());
 *         ::ELLIPSA_NUM_SINGULAR (a collapsed component, named with the
 *         reason); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_m_step(ellipsa_model **next,
                                                        const ellipsa_em_statistics *statistics,
                                                        const ellipsa_fit_options *options);

/**
 * @brief The fitted model: the statistics' parameters with their diagnostics.
 *
 * The model of the parameters the statistics were computed under, with the
 * log-likelihood of the rows, BIC and ICL (as ellipsa_model_fit()), the
 * driver's convergence outcome and iteration count, and the log-density
 * cutoff, which the caller computes from the fitting rows' log-densities
 * (ellipsa_model_score_v3() under the parameters; see
 * ::ELLIPSA_MIXTURE_CUTOFF_TAIL). The selection table has the one candidate.
 * @param[out] out              The model, or NULL on failure.
 * @param statistics            Merged statistics of all rows.
 * @param log_density_cutoff    Finite.
 * @param converged             1 when the stopping rule was met, else 0.
 * @param iterations            EM iterations done, >= 0.
 * @param options               As ellipsa_em_statistics_m_step().
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (as
 *         ellipsa_em_statistics_m_step(), a cutoff that is not finite,
 *         converged not 0 or 1, negative iterations); ::ELLIPSA_ERR_SHAPE;
 *         ::ELLIPSA_ERR_DATA (no rows); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_em_statistics_model(ellipsa_model **out,
                                                       const ellipsa_em_statistics *statistics,
                                                       double log_density_cutoff, int32_t converged,
                                                       int64_t iterations,
                                                       const ellipsa_fit_options *options);

/**
 * @brief Adds to an accumulator the rows whose squared distance is at most a limit.
 *
 * The C-step's subset (the rows under the h-th smallest distance) and the
 * reweighting step's kept rows are such rows; their accumulators merge and
 * travel as bytes like any other. Rows with a NaN value that are within the
 * limit are skipped and counted (ellipsa_accumulator_rows()); a NaN distance
 * is never within. An infinite value refuses the whole call.
 * @param accumulator  The accumulator (used by one thread at a time).
 * @param rows         n x p view, p the accumulator's.
 * @param d2           n squared distances (e.g. from ellipsa_model_score_v3());
 *                     may be NULL when n = 0.
 * @param limit        Rows with d2 <= limit are added; not NaN.
 * @param[out] added   Rows added, or NULL.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE;
 *         ::ELLIPSA_ERR_ARGUMENT (limit NaN); ::ELLIPSA_ERR_DATA (an
 *         infinite value); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_accumulator_add_within(ellipsa_accumulator *accumulator,
                                                          const ellipsa_matrix *rows, const double *d2,
                                                          double limit, int64_t *added);

/**
 * @brief The MCD model from the statistics of its h-subset and of the rows
 *        the reweighting keeps.
 *
 * The finish of ellipsa_model_fit() with method mcd (the same code): the raw
 * estimate is the subset's mean and covariance (divisor h) times the
 * Croux-Haesbroeck factor and the small-sample factor; with `kept`, the
 * location and scatter are the mean and covariance (divisor: rows kept) of
 * the kept rows times the reweighting factor and its small-sample factor
 * (the raw estimate stands when p or fewer rows were kept or that
 * covariance is singular); without, they are the raw estimate (to compute
 * the distances that choose the kept rows: at most
 * chi2q(p, ::ELLIPSA_MCD_REWEIGHT_LEVEL)). The row sets of the model
 * (ellipsa_model_row_set()) are empty: statistics do not list rows.
 * @param[out] out  The model, or NULL on failure.
 * @param subset    Accumulator of the h rows of the subset.
 * @param kept      Accumulator of the rows kept by the reweighting, or NULL.
 * @param rows      n, the number of rows of the fit (h follows from n, p, alpha).
 * @param options   Method ::ELLIPSA_METHOD_MCD with alpha 0.5 and the normal
 *                  consistency rule; small-sample factors on or off; column names.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (another
 *         method, alpha or consistency rule; a subset whose row count is not
 *         h; more kept rows than n); ::ELLIPSA_ERR_SHAPE (accumulators or
 *         column names of different p); ::ELLIPSA_ERR_DATA (n <= p);
 *         ::ELLIPSA_NUM_SINGULAR (the subset's covariance is not positive
 *         definite); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_model_from_mcd_statistics(ellipsa_model **out,
                                                             const ellipsa_accumulator *subset,
                                                             const ellipsa_accumulator *kept, int64_t rows,
                                                             const ellipsa_fit_options *options);
/** @} */

/* ======================================================================== */
/** @name Model queries
 *  Read-only, thread-safe on a shared model. Matrices are written row-major
 *  into caller buffers whose capacity (in elements) is passed and checked.
 *  @{ */
/** Kind of a model. */
#define ELLIPSA_KIND_GAUSSIAN 1 /**< One location and scatter. */
#define ELLIPSA_KIND_MIXTURE 2  /**< A Gaussian mixture. */

/**
 * @brief Kind (ELLIPSA_KIND_), method, dimension p and component count of a model.
 *
 * Any out-pointer may be NULL to skip it. A Gaussian model has 1 component.
 * @param[out] kind       ::ELLIPSA_KIND_GAUSSIAN or ::ELLIPSA_KIND_MIXTURE, or NULL.
 * @param[out] method     The method that fitted the model, or NULL.
 * @param[out] dimension  p, the number of columns, or NULL.
 * @param[out] components Number of components, or NULL.
 * @param model           The model.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (model).
 */
ELLIPSA_API ellipsa_status ellipsa_model_describe(int32_t *kind, ellipsa_method *method,
                                                  int64_t *dimension, int32_t *components,
                                                  const ellipsa_model *model);

/**
 * @brief Rows of the fitting data: used by the fit, and dropped for missing values.
 * @param[out] used    Rows used by the fit, or NULL.
 * @param[out] dropped Rows dropped for missing values, or NULL.
 * @param model        The model.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (model). NULL out-pointers are skipped.
 */
ELLIPSA_API ellipsa_status ellipsa_model_rows(int64_t *used, int64_t *dropped,
                                              const ellipsa_model *model);

/**
 * @brief Name of column j (0-based).
 * @param[out] out A string owned by the model, valid while the model lives.
 * @param model The model.
 * @param j Column index, 0 <= j < p.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (j out of range).
 */
ELLIPSA_API ellipsa_status ellipsa_model_column_name(const char **out, const ellipsa_model *model,
                                                     int64_t j);

/**
 * @brief Location (p values) and scatter (p x p, row-major) of component k.
 *
 * For a Gaussian model k must be 0. For the MCD family these are the final
 * (reweighted) estimates; raw ones come from ellipsa_model_raw_estimate().
 * Either buffer may be NULL to skip it; weight may be NULL.
 * @param[out] location         p doubles, or NULL.
 * @param location_capacity     Elements available in location (>= p when not NULL).
 * @param[out] scatter          p*p doubles, or NULL.
 * @param scatter_capacity      Elements available in scatter (>= p*p when not NULL).
 * @param[out] weight           Mixing weight (1 for a Gaussian model), or NULL.
 * @param model                 The model.
 * @param k                     Component, 0-based.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (model); ::ELLIPSA_ERR_ARGUMENT (k);
 *         ::ELLIPSA_ERR_SHAPE (a capacity too small).
 */
ELLIPSA_API ellipsa_status ellipsa_model_component(double *location, int64_t location_capacity,
                                                   double *scatter, int64_t scatter_capacity,
                                                   double *weight, const ellipsa_model *model,
                                                   int32_t k);

/**
 * @brief MCD family: the raw (unreweighted, consistency-corrected) estimate.
 * @param[out] location     p doubles, or NULL.
 * @param location_capacity Elements available in location.
 * @param[out] scatter      p*p doubles (row-major), or NULL.
 * @param scatter_capacity  Elements available in scatter.
 * @param model             The model.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (model); ::ELLIPSA_ERR_STATE (not an
 *         MCD-family model); ::ELLIPSA_ERR_SHAPE (a capacity too small).
 */
ELLIPSA_API ellipsa_status ellipsa_model_raw_estimate(double *location, int64_t location_capacity,
                                                      double *scatter, int64_t scatter_capacity,
                                                      const ellipsa_model *model);

/**
 * @brief A named number describing the fit.
 *
 * Names (each exists only for the methods listed; others give
 * ::ELLIPSA_ERR_STATE): "shrinkage_intensity" (ledoit-wolf, oas, mrcd),
 * "h", "consistency_factor", "reweight_factor", "raw_log_det" (mcd, detmcd,
 * mrcd), "consistency_rule" (mcd, detmcd, mrcd: the ELLIPSA_CONSISTENCY_
 * value; mrcd always 0). For mcd and detmcd, "consistency_factor" scales the
 * raw scatter (see ellipsa_fit_options_set_consistency()) and
 * "reweight_factor" is the consistency factor of the reweighted scatter for
 * the rows kept at chi2q(p, 0.975). MRCD has no reweighting step: its
 * "consistency_factor" is the one applied to the regularised subset scatter
 * inside the C-steps, and its "reweight_factor" is the median calibration of
 * the result, med(d2) / chi2q(p, 0.5) over the fitting rows' distances under
 * the regularised scatter; the final scatter is that factor times the raw
 * (regularised) scatter of ellipsa_model_raw_estimate(), the location is the
 * raw one, and ::ELLIPSA_ROWS_OUTLIERS holds the rows whose distance under
 * the final scatter exceeds chi2q(p, 0.975), the rows scoring flags at level
 * 0.975 against the chi-square. "log_likelihood", "bic", "icl", "iterations", "converged" (1 when
 * the chosen EM run met its tolerance, 0 when it stopped at the iteration cap),
 * "parameters", "log_density_cutoff" (mixture), "log_det" (gaussian models),
 * "divisor" (1 for n, 2 for n-1; classical), "small_sample_raw",
 * "small_sample_reweighted" (mcd, detmcd: the small-sample factors applied, 1
 * when switched off), "reference" (the recorded ELLIPSA_REFERENCE_ value),
 * "reference_rows", "fitting_reference_rows" (m of the new-rows and of the
 * fitting-rows distribution; gaussian models; see ::ELLIPSA_REFERENCE_NEW_ROWS).
 * @param[out] out The value.
 * @param model    The model.
 * @param name     One of the names above (NUL-terminated).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (unknown name);
 *         ::ELLIPSA_ERR_STATE (the name does not apply to this model).
 */
ELLIPSA_API ellipsa_status ellipsa_model_diagnostic(double *out, const ellipsa_model *model,
                                                    const char *name);

/** Row sets recorded by a fit (indices are 0-based rows of the fitting data, NaN rows included in the count). */
#define ELLIPSA_ROWS_H_SUBSET 1 /**< MCD family: the final h-subset. */
#define ELLIPSA_ROWS_OUTLIERS 2 /**< MCD family: rows flagged by the reweighting rule. */
#define ELLIPSA_ROWS_DROPPED 3  /**< Rows dropped for missing values (empty for a model from an accumulator, whose rows are not numbered). */

/**
 * @brief A set of fitting-data rows, ascending.
 *
 * Call with out = NULL to learn the count, then with a buffer.
 * @param[out] out      Row indices, or NULL.
 * @param capacity      Elements available in out.
 * @param[out] count    Size of the set (always written on success).
 * @param model         The model.
 * @param which         ::ELLIPSA_ROWS_H_SUBSET, ::ELLIPSA_ROWS_OUTLIERS or ::ELLIPSA_ROWS_DROPPED.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (count, model); ::ELLIPSA_ERR_ARGUMENT
 *         (unknown set); ::ELLIPSA_ERR_STATE (set not recorded by this method);
 *         ::ELLIPSA_ERR_SHAPE (capacity too small; count is still written).
 */
ELLIPSA_API ellipsa_status ellipsa_model_row_set(int64_t *out, int64_t capacity, int64_t *count,
                                                 const ellipsa_model *model, int32_t which);

/** One candidate of a mixture model choice. Grows only at the end. */
typedef struct ellipsa_candidate {
  int64_t struct_size;    /**< Set by the caller (::ELLIPSA_CANDIDATE_INIT), the same in every element. */
  int32_t components;     /**< K. */
  int32_t structure;      /**< ELLIPSA_STRUCTURE_ value. */
  double log_likelihood;  /**< Maximised log-likelihood (NaN if the candidate could not be fitted: see ellipsa_candidate_explain()). */
  int64_t parameters;     /**< Free parameters. */
  double bic;             /**< -2 logL + parameters * log n (lower is better). */
  double icl;             /**< BIC plus the entropy term (lower is better). */
  int32_t converged;      /**< 1 when EM met its tolerance; 0 when it stopped at the iteration cap (still a fit that competes) or the candidate could not be fitted. */
  int32_t chosen;         /**< 1 for the candidate the model holds. */
} ellipsa_candidate;

/** Initialiser for ::ellipsa_candidate (sets struct_size). */
#define ELLIPSA_CANDIDATE_INIT \
  { (int64_t)sizeof(ellipsa_candidate), 0, 0, 0.0, 0, 0.0, 0.0, 0, 0 }

/**
 * @brief Mixtures: the model-choice table, one entry per candidate tried.
 *
 * The array is walked with the caller's element size (out[0].struct_size), so
 * a caller compiled against an older, shorter ::ellipsa_candidate, or a newer,
 * longer one, gets every field both know; each element's struct_size is set to
 * the bytes written.
 * @param[out] out      Array of capacity entries (each with the same struct_size,
 *                      at least the first version's), or NULL.
 * @param capacity      Entries available.
 * @param[out] count    Number of candidates (always written on success).
 * @param model         The model.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_STATE (not a mixture);
 *         ::ELLIPSA_ERR_SHAPE (capacity too small, a struct_size below the first
 *         version, or elements whose struct_size differs).
 */
ELLIPSA_API ellipsa_status ellipsa_model_selection(ellipsa_candidate *out, int64_t capacity,
                                                   int64_t *count, const ellipsa_model *model);

/**
 * @brief Mixtures: why a candidate of the model choice could not be fitted.
 *
 * A candidate that could not be fitted has NaN log-likelihood, BIC and ICL;
 * its reason is a sentence such as "mixture: K = 13 exceeds the number of rows
 * (12)" or "... fewer than the 15 free parameters of a 4-component spherical
 * mixture in 2 dimensions". A model loaded from a file written before reasons
 * were stored gives an empty reason for every candidate.
 * @param[out] reason NUL-terminated text owned by the model, valid until the
 *                    model is destroyed; "" for a candidate that was fitted.
 *                    Set to NULL on failure.
 * @param model       A mixture model.
 * @param index       Position of the candidate in the table of
 *                    ellipsa_model_selection(), 0 <= index < count.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (reason, model);
 *         ::ELLIPSA_ERR_STATE (not a mixture); ::ELLIPSA_ERR_ARGUMENT (index
 *         outside the table). Thread-safe (the model is read only).
 */
ELLIPSA_API ellipsa_status ellipsa_candidate_explain(const char **reason, const ellipsa_model *model,
                                                     int64_t index);
/** @} */

/* ======================================================================== */
/** @name Scoring
 *  @{ */
/**
 * @brief Caller-owned buffers that ellipsa_model_score() fills; NULL skips one.
 *
 * Initialise with ::ELLIPSA_SCORES_INIT (which sets struct_size), then point the
 * wanted fields at buffers of the documented sizes for n scored rows, p
 * variables and K components. Grows only at the end.
 */
typedef struct ellipsa_scores {
  int64_t struct_size;        /**< sizeof(ellipsa_scores) as the caller compiled it. */
  double *squared_distance;   /**< [n] squared Mahalanobis distance (mixture: to the most probable component). NaN when nothing is observed; +inf when it overflows double precision (a value far beyond the model's scale), with p-value 0 and the row flagged. */
  double *p_value;            /**< [n] upper-tail probability of the distance under the scoring reference (chi-square with `observed` degrees of freedom, or see ::ELLIPSA_REFERENCE_NEW_ROWS). */
  int32_t *flag;              /**< [n] 1 flagged, 0 not, -1 not scorable (no observed coordinate). */
  int32_t *observed;          /**< [n] coordinates observed (the degrees of freedom used). */
  double *contribution;       /**< [n*p] row-major: (x-T)_j (S^-1 (x-T))_j, summing to the distance; NaN for missing j. */
  double *conditional_drop;   /**< [n*p] row-major: decrease of the distance when variable j is left out. */
  int32_t *component;         /**< [n] mixtures: most probable component (0-based); Gaussian: 0. */
  double *membership;         /**< [n*K] row-major: mixtures: posterior probabilities (rows sum to 1). */
  double *log_density;        /**< [n] log-density of the row's observed coordinates under the model. */
  int32_t *low_density;       /**< [n] mixtures: 1 when log_density < the model's "log_density_cutoff", 0 if not, -1 not scorable; Gaussian: same as flag. */
} ellipsa_scores;

/** Initialiser for ::ellipsa_scores: every buffer NULL. */
#define ELLIPSA_SCORES_INIT \
  { (int64_t)sizeof(ellipsa_scores), NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL }

/**
 * @brief Scores rows against a model.
 *
 * Gaussian models: the squared Mahalanobis distance d2 of each row from the
 * location under the scatter (Cholesky solves, no inverse), its p-value under
 * the model's scoring reference (diagnostic "reference": the chi-square with
 * p degrees of freedom for files from ellipsa 0.1.0 and for
 * ::ELLIPSA_REFERENCE_CHI2, else see ::ELLIPSA_REFERENCE_NEW_ROWS), a flag
 * when d2 exceeds that reference's limit at level (chi2q(p, level) for the
 * chi-square), and the per-variable contributions. Rows with NaN coordinates are scored on the
 * observed coordinates (the marginal Gaussian) with as many degrees of
 * freedom as observed coordinates: nothing is imputed.
 * Mixture models: memberships, most probable component, the log-density under
 * the mixture, and the distance to the most probable component. `flag` applies
 * the chi-square rule above to that distance (with that component's location
 * and scatter); `low_density` applies the mixture-aware rule: the row's
 * log-density is below the cutoff calibrated on the fitting rows at fit time
 * (their lower 2.5% quantile; diagnostic "log_density_cutoff"). A row so far
 * beyond the model's scale that its density underflows under every component
 * gets log-density -inf, distance +inf and the limit of the memberships: the
 * component nearest in the Mahalanobis sense takes it (the weights decide
 * between equally near ones); never NaN.
 *
 * @param[out] out  Buffers to fill (see ::ellipsa_scores); on failure their
 *                  contents are unspecified.
 * @param model     The model (read-only; may be shared by threads).
 * @param data      n x p view with the model's p columns in the model's order.
 * @param level     Flagging level in (0, 1), e.g. 0.975.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (column count,
 *         negative sizes or strides, struct_size too small);
 *         ::ELLIPSA_ERR_ARGUMENT (level); ::ELLIPSA_ERR_DATA (an infinite value:
 *         the message names its data row and column);
 *         ::ELLIPSA_NUM_SINGULAR (the scatter block of a row's observed
 *         coordinates cannot be factored: only for a scatter at the edge of
 *         singularity); ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_model_score(ellipsa_scores *out, const ellipsa_model *model,
                                               const ellipsa_matrix *data, double level);

/** Scoring reference: the one the model records (ellipsa_fit_options_set_reference()). */
#define ELLIPSA_REFERENCE_MODEL 0
/** Scoring reference: d2 ~ chi-square with q degrees of freedom (q observed coordinates): parameters known. */
#define ELLIPSA_REFERENCE_CHI2 1
/**
 * Scoring reference for rows that were not in the fit (Tracy, Young & Mason
 * 1992, phase II): with m reference rows, T^2 = d2 (times (n-1)/n for a
 * scatter with divisor n) and m(m-q) T^2 / (q(m+1)(m-1)) ~ F(q, m-q), q the
 * observed coordinates. Exact for the classical fit of normal rows (m = n).
 * Shrinkage fits use m = n / (1 - intensity)^(1/3); mcd and detmcd at alpha 0.5 an
 * effective m calibrated by simulation on their own distances (an F
 * reference as in Hardin & Rocke 2005, with our simulated degrees of freedom),
 * other alpha the rows kept by the reweighting; mrcd m = h. Measured accuracy
 * in docs/calibration.md; diagnostic "reference_rows" gives m.
 */
#define ELLIPSA_REFERENCE_NEW_ROWS 2
/**
 * Scoring reference for the rows that made the fit. Classical fits: Tracy,
 * Young & Mason (1992) phase I, m T^2 / (m-1)^2 ~ Beta(q/2, (m-q-1)/2), T^2 as
 * above, m = n. Shrinkage fits: the chi-square (measured closest). mcd,
 * detmcd, mrcd: the phase II form above with their own effective m for
 * fitting rows (diagnostic "fitting_reference_rows"); docs/calibration.md.
 */
#define ELLIPSA_REFERENCE_FITTING_ROWS 3

/**
 * @brief Names a scoring reference: "model", "chi2", "new-rows", "fitting-rows".
 * @param reference An ELLIPSA_REFERENCE_ value.
 * @return A static string; "unknown" for other values. Thread-safe.
 */
ELLIPSA_API const char *ellipsa_reference_name(int32_t reference);

/**
 * @brief The scoring reference with the given name (as ellipsa_reference_name() writes it).
 * @param[out] out The ELLIPSA_REFERENCE_ value.
 * @param name     NUL-terminated name.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (unknown name;
 *         the message lists the names). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_reference_from_name(int32_t *out, const char *name);

/**
 * @brief Scores rows against a model with a chosen scoring reference.
 *
 * As ellipsa_model_score() (which is this call with ::ELLIPSA_REFERENCE_MODEL),
 * except that `p_value` and `flag` come from the reference: the flag is set
 * when the row's upper-tail probability under it is below 1 - level.
 * Mixtures accept ::ELLIPSA_REFERENCE_MODEL and ::ELLIPSA_REFERENCE_CHI2 only.
 * @param[out] out  Buffers to fill (see ::ellipsa_scores).
 * @param model     The model (read-only; may be shared by threads).
 * @param data      n x p view with the model's p columns in the model's order.
 * @param level     Flagging level in (0, 1), e.g. 0.975.
 * @param reference An ELLIPSA_REFERENCE_ value.
 * @return As ellipsa_model_score(), and ::ELLIPSA_ERR_ARGUMENT (unknown reference);
 *         ::ELLIPSA_ERR_STATE (a reference the model cannot use: a mixture, or
 *         a model with too few reference rows m for it: m > p for new rows,
 *         m > p + 1 for fitting rows).
 * Thread-safe for a shared model.
 */
ELLIPSA_API ellipsa_status ellipsa_model_score_v2(ellipsa_scores *out, const ellipsa_model *model,
                                                  const ellipsa_matrix *data, double level,
                                                  int32_t reference);
/** @} */

/* ======================================================================== */
/** @name Threads
 *  Fits and scoring split their rows into fixed chunks (boundaries that do not
 *  depend on the thread count) and merge the chunks' results in a fixed order,
 *  so a model and its scores are bit-identical whatever the thread count.
 *  A thread count of 0 means: the environment variable `ELLIPSA_THREADS` (a
 *  whole number from 1 to 256) when it is set, else the cores the process may
 *  run on. The variable is read at each call that resolves the default. With
 *  more than one thread, set `OPENBLAS_NUM_THREADS=1` (or the equivalent of
 *  your BLAS) so that BLAS does not start its own threads inside ours; results
 *  do not depend on it. Progress callbacks are called from the calling thread
 *  only. Threads parallelise: the classical and shrinkage moments, scoring of
 *  Gaussian models, mcd (its random starts, the C-steps of its candidates side
 *  by side, the distances of all rows, the standardisation and the
 *  reweighting's distances), detmcd (the first h-subsets of its six starts
 *  side by side; in each lockstep C-step the distances of all rows for every
 *  start in one pass over row chunks, then the starts' selections and refits
 *  side by side; the tanh, rank and normal-score columns and the OGK scales
 *  of its starting estimates; the standardisation and the reweighting's
 *  distances), and
 *  the E-step and weighted moments of mixtures; other
 *  parts run on the calling thread. An mcd, detmcd or mixture fit keeps its
 *  threads waiting between its loops and ends them before it returns.
 *  @{ */

/**
 * @brief Threads a fit may use (default 0: `ELLIPSA_THREADS` or the available cores).
 *
 * Applies to every method; the fitted model does not depend on it.
 * @param options The options.
 * @param threads 0 (the default rule above) or a count in [1, 256].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (threads
 *         outside [0, 256]). A fit with threads 0 returns ::ELLIPSA_ERR_ARGUMENT
 *         when `ELLIPSA_THREADS` is set to anything but a whole number in [1, 256].
 *         Not thread-safe on one options handle.
 */
ELLIPSA_API ellipsa_status ellipsa_fit_options_set_threads(ellipsa_fit_options *options,
                                                           int32_t threads);

/**
 * @brief The thread count a call given `requested` threads uses.
 *
 * For callers that arrange their own work around the library's: e.g. a
 * program that reads and parses the next block of rows on one thread while
 * the library scores the current block on the others. With `requested` 0 it
 * reads `ELLIPSA_THREADS` now, as a call would.
 * @param[out] threads  `requested` itself when positive; for 0,
 *                      `ELLIPSA_THREADS` when set, else the cores the process
 *                      may run on (at most 256). Untouched on error.
 * @param requested     0 or a count in [1, 256].
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (`threads` NULL);
 *         ::ELLIPSA_ERR_ARGUMENT (`requested` outside [0, 256]; `requested` 0
 *         with `ELLIPSA_THREADS` set to anything but a whole number in [1, 256]).
 *         Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_threads_resolve(int32_t *threads, int32_t requested);

/**
 * @brief Scores rows against a model with a chosen scoring reference on a chosen number of threads.
 *
 * As ellipsa_model_score_v2() (which is this call with threads 0), with the
 * thread count given: 0 for `ELLIPSA_THREADS` or the available cores, else a
 * count in [1, 256]. The outputs do not depend on it. Only the buffers that
 * are not NULL are computed: asking for squared distances alone computes no
 * p-value or contribution.
 * @param[out] out  Buffers to fill (see ::ellipsa_scores).
 * @param model     The model (read-only; may be shared by threads).
 * @param data      n x p view with the model's p columns in the model's order.
 * @param level     Flagging level in (0, 1), e.g. 0.975.
 * @param reference An ELLIPSA_REFERENCE_ value.
 * @param threads   0, or a thread count in [1, 256].
 * @return As ellipsa_model_score_v2(), and ::ELLIPSA_ERR_ARGUMENT (threads
 *         outside [0, 256]; threads 0 with `ELLIPSA_THREADS` set to anything but
 *         a whole number in [1, 256]).
 * Thread-safe for a shared model.
 */
ELLIPSA_API ellipsa_status ellipsa_model_score_v3(ellipsa_scores *out, const ellipsa_model *model,
                                                  const ellipsa_matrix *data, double level,
                                                  int32_t reference, int32_t threads);
/** @} */

/* ======================================================================== */
/** @name Batch comparison: has the process moved?
 *  A new batch of rows against a reference batch of the same variables, in
 *  the same column order. ellipsa_batch_compare() runs every test once and
 *  returns a read-only result handle; the queries below read it. Rows with a
 *  NaN in any column are left out of every test and counted
 *  (ellipsa_comparison_rows()). The tests assume independent rows; a p-value
 *  is evidence about the process, not a release decision for parts: follow
 *  your quality procedures and local regulations.
 *  @{ */
/** Opaque result of a comparison: read-only after creation, shareable between threads. */
typedef struct ellipsa_comparison ellipsa_comparison;

/** Settings of ellipsa_batch_compare(). Initialise with ::ELLIPSA_COMPARE_OPTIONS_INIT; grows only at the end. */
typedef struct ellipsa_compare_options {
  int64_t struct_size;         /**< sizeof(ellipsa_compare_options) as the caller compiled it. */
  int32_t robust;              /**< 1 (default): also run the robust mean test; 0: skip it (it costs 2 DetMCD fits per relabelling). */
  int32_t permutations;        /**< Random relabellings for the robust p-value, 0 to 100000 (default 199; 0: statistic only, p-value NaN). */
  uint64_t seed;               /**< Seed of the relabellings (default 0); the same seed gives the same p-value. */
  double alpha;                /**< DetMCD subset fraction of the robust test, in [0.5, 1] (default 0.75). */
  ellipsa_progress_fn progress; /**< Called during the relabellings, or NULL. */
  void *progress_user;         /**< Passed to progress. */
} ellipsa_compare_options;

/** Initialiser for ::ellipsa_compare_options: the defaults listed with each field. */
#define ELLIPSA_COMPARE_OPTIONS_INIT \
  { (int64_t)sizeof(ellipsa_compare_options), 1, 199, 0u, 0.75, NULL, NULL }

/**
 * @brief Compares a new batch with a reference: mean shift, change of covariance, per-variable shifts.
 *
 * Tests (each read with ellipsa_comparison_test() or ellipsa_comparison_variables()):
 * - ::ELLIPSA_TEST_MEAN_SHIFT: Hotelling's two-sample T^2 with the pooled
 *   covariance; (n1 + n2 - p - 1) / (p (n1 + n2 - 2)) T^2 ~ F(p, n1 + n2 - p - 1)
 *   for normal rows with equal covariances.
 * - ::ELLIPSA_TEST_ROBUST_MEAN_SHIFT: the same statistic on the reweighted
 *   DetMCD location and scatter of each batch (Hubert, Rousseeuw & Verdonck
 *   2012), so that a few gross rows do not decide it. Its law is not F; the
 *   p-value is a Monte Carlo permutation p-value (1 + #{T2* >= T2}) / (1 + B)
 *   over B random relabellings of the pooled rows, valid when the two
 *   batches without a shift are exchangeable (a change of scatter alone can
 *   also lower it).
 * - ::ELLIPSA_TEST_COVARIANCE_CHANGE: Box's M (Box 1949) with its chi-square
 *   approximation on p (p + 1) / 2 df. It is sensitive to non-normality: a
 *   heavy-tailed or skewed process rejects equal covariances too often, so
 *   read a small p-value together with ellipsa_data_shape() of each batch.
 * - per variable: the shift of the mean in reference standard deviations and
 *   Welch's (1947) unequal-variance t test, with Holm (1979) adjusted p-values.
 *
 * @param[out] out   The result; destroy it with ellipsa_comparison_destroy(). NULL on failure.
 * @param reference  n1 x p view of the reference rows.
 * @param batch      n2 x p view of the new rows, same columns in the same order.
 * @param options    Settings, or NULL for the defaults (::ELLIPSA_COMPARE_OPTIONS_INIT).
 * @return ::ELLIPSA_OK;
 *   ::ELLIPSA_ERR_NULL (out, reference, batch, or a data pointer with a non-empty shape);
 *   ::ELLIPSA_ERR_SHAPE (different column counts, no columns, negative sizes or
 *     strides, options->struct_size too small);
 *   ::ELLIPSA_ERR_ARGUMENT (robust not 0 or 1, permutations or alpha out of range);
 *   ::ELLIPSA_ERR_DATA (an infinite value, named; fewer than 2 complete rows in a batch);
 *   ::ELLIPSA_ERR_CANCELLED; ::ELLIPSA_ERR_MEMORY.
 *   A test that cannot be computed (too few rows for it, a singular covariance,
 *   an exact fit) does not fail the call: its query says why.
 * Thread-safe; the views are read during the call only.
 */
ELLIPSA_API ellipsa_status ellipsa_batch_compare(ellipsa_comparison **out, const ellipsa_matrix *reference,
                                                 const ellipsa_matrix *batch,
                                                 const ellipsa_compare_options *options);

/**
 * @brief Destroys a comparison; NULL is a no-op.
 * @param comparison The result, or NULL.
 */
ELLIPSA_API void ellipsa_comparison_destroy(ellipsa_comparison *comparison);

/** Tests of a comparison, for ellipsa_comparison_test(). */
#define ELLIPSA_TEST_MEAN_SHIFT 1        /**< Hotelling's two-sample T^2, F law. */
#define ELLIPSA_TEST_ROBUST_MEAN_SHIFT 2 /**< T^2 on DetMCD estimates, permutation p-value. */
#define ELLIPSA_TEST_COVARIANCE_CHANGE 3 /**< Box's M, chi-square approximation. */

/** Where a p-value comes from. */
#define ELLIPSA_LAW_F 1           /**< Exact F law (normal rows, equal covariances). */
#define ELLIPSA_LAW_CHI2 2        /**< Large-sample chi-square approximation. */
#define ELLIPSA_LAW_PERMUTATION 3 /**< Monte Carlo permutation p-value. */

/** One test of a comparison. Set struct_size; grows only at the end. */
typedef struct ellipsa_test_result {
  int64_t struct_size;   /**< sizeof(ellipsa_test_result) as the caller compiled it. */
  double statistic;      /**< T^2 (classical or robust), or Box's M. */
  double transformed;    /**< The F value of T^2; (1 - c1) M for Box's M; for the robust test the F transformation of its T^2 (for comparison only: its law is not F). */
  double df1;            /**< F: p; Box's M: p (p + 1) / 2; robust: p. */
  double df2;            /**< F: n1 + n2 - p - 1; otherwise NaN. */
  double p_value;        /**< Upper-tail p-value under "no change"; NaN for the robust test with 0 permutations. */
  int32_t law;           /**< ELLIPSA_LAW_ value the p-value comes from. */
  int32_t approximate;   /**< 1 when the p-value is an approximation (chi-square or Monte Carlo), 0 when exact under its assumptions. */
  int64_t permutations_used;   /**< Robust test: relabellings whose fits succeeded; otherwise 0. */
  int64_t permutations_failed; /**< Robust test: relabellings left out because a fit was an exact fit; otherwise 0. */
} ellipsa_test_result;

/**
 * @brief One test of a comparison.
 * @param[out] out    Filled on success (struct_size set by the caller).
 * @param comparison  The result.
 * @param which       ::ELLIPSA_TEST_MEAN_SHIFT, ::ELLIPSA_TEST_ROBUST_MEAN_SHIFT or ::ELLIPSA_TEST_COVARIANCE_CHANGE.
 * @return ::ELLIPSA_OK;
 *   ::ELLIPSA_ERR_NULL (out, comparison); ::ELLIPSA_ERR_ARGUMENT (unknown test);
 *   ::ELLIPSA_ERR_SHAPE (struct_size too small);
 *   ::ELLIPSA_ERR_STATE (the robust test was not requested);
 *   and when the test could not be computed, the reason as a status with
 *   its message: ::ELLIPSA_ERR_DATA (too few complete rows for this test:
 *   T^2 needs n1 + n2 >= p + 2, Box's M p + 1 rows per batch, the robust
 *   test p + 1 rows per batch); ::ELLIPSA_NUM_SINGULAR (a covariance that is
 *   not positive definite, e.g. a constant column: the message names it);
 *   ::ELLIPSA_NUM_EXACT_FIT (robust: at least h rows of a batch on a hyperplane).
 * Thread-safe on a shared result.
 */
ELLIPSA_API ellipsa_status ellipsa_comparison_test(ellipsa_test_result *out, const ellipsa_comparison *comparison,
                                                   int32_t which);

/** Per-variable shift of a comparison. Set struct_size; grows only at the end. */
typedef struct ellipsa_variable_shift {
  int64_t struct_size;   /**< sizeof(ellipsa_variable_shift) as the caller compiled it. */
  double reference_mean; /**< Mean of the reference rows. */
  double reference_sd;   /**< Standard deviation (divisor n - 1) of the reference rows. */
  double batch_mean;     /**< Mean of the new rows. */
  double batch_sd;       /**< Standard deviation (divisor n - 1) of the new rows. */
  double shift_in_sd;    /**< (batch_mean - reference_mean) / reference_sd; +-Inf or NaN when reference_sd is 0. */
  double t;              /**< Welch's t (new minus reference); NaN when both sds are 0. */
  double df;             /**< Welch-Satterthwaite degrees of freedom; NaN when both sds are 0. */
  double p_value;        /**< Two-sided p-value of t; NaN when both sds are 0. */
  double p_holm;         /**< Holm (1979) adjusted over the variables with a p-value; NaN when p_value is. */
} ellipsa_variable_shift;

/**
 * @brief Per-variable shifts, one entry per column in column order.
 *
 * Call with out = NULL to learn the count (p), then with an array whose
 * entries have struct_size set.
 * @param[out] out      Array of capacity entries, or NULL.
 * @param capacity      Entries available in out.
 * @param[out] count    p (always written on success).
 * @param comparison    The result.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (count, comparison);
 *   ::ELLIPSA_ERR_SHAPE (capacity below p, count still written; or a struct_size too small).
 * Thread-safe on a shared result.
 */
ELLIPSA_API ellipsa_status ellipsa_comparison_variables(ellipsa_variable_shift *out, int64_t capacity,
                                                        int64_t *count, const ellipsa_comparison *comparison);

/**
 * @brief Rows of each batch used by the tests and left out for missing values.
 * @param[out] reference_used    Complete reference rows, or NULL.
 * @param[out] reference_dropped Reference rows with a NaN, or NULL.
 * @param[out] batch_used        Complete new rows, or NULL.
 * @param[out] batch_dropped     New rows with a NaN, or NULL.
 * @param comparison             The result.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (comparison). NULL out-pointers are skipped.
 */
ELLIPSA_API ellipsa_status ellipsa_comparison_rows(int64_t *reference_used, int64_t *reference_dropped,
                                                   int64_t *batch_used, int64_t *batch_dropped,
                                                   const ellipsa_comparison *comparison);
/** @} */

/* ======================================================================== */
/** @name Shape checks: is the bulk elliptical?
 *  Mardia's (1970) multivariate skewness and kurtosis. Robust profiles (and
 *  their chi-square limits) assume an elliptical, normal-like bulk; these say
 *  whether the rows look like it.
 *  @{ */
/** Result of a shape check. Set struct_size; grows only at the end. */
typedef struct ellipsa_shape_test {
  int64_t struct_size;       /**< sizeof(ellipsa_shape_test) as the caller compiled it. */
  int64_t rows;              /**< Rows the statistics were computed on. */
  double skewness;           /**< Mardia's b1 = (1/n^2) sum_ij g_ij^3, g_ij = (x_i - m)' S^-1 (x_j - m), S with divisor n (0 for a normal law). */
  double skewness_statistic; /**< n b1 / 6, ~ chi2(skewness_df) for a normal sample. */
  double skewness_df;        /**< p (p + 1) (p + 2) / 6. */
  double skewness_p_value;   /**< Upper-tail p-value of skewness_statistic. */
  double kurtosis;           /**< Mardia's b2 = (1/n) sum_i g_ii^2 (p (p + 2) for a normal law). */
  double kurtosis_expected;  /**< Centre of the reference law: p (p + 2), or for rows selected by a cutoff its truncated value (ellipsa_model_shape()). */
  double kurtosis_z;         /**< (b2 - kurtosis_expected) / sqrt(8 p (p + 2) / n), ~ N(0, 1). */
  double kurtosis_p_value;   /**< Two-sided p-value of kurtosis_z. */
  int32_t approximate;       /**< 1 when the rows were selected by a fit: the reference laws are then approximate (see ellipsa_model_shape()). */
} ellipsa_shape_test;

/**
 * @brief Mardia's skewness and kurtosis of the complete rows of data.
 *
 * The reference laws are Mardia's (1970) large-sample ones (chi-square and
 * normal): read them as approximate below about 50 rows. approximate = 0.
 * @param[out] out Filled on success (struct_size set by the caller).
 * @param data     n x p view; rows with a NaN are left out; needs at least p + 2 complete rows.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (no columns,
 *   negative sizes or strides, struct_size too small); ::ELLIPSA_ERR_DATA (an
 *   infinite value, or fewer than p + 2 complete rows); ::ELLIPSA_NUM_SINGULAR
 *   (the covariance of the rows is not positive definite, e.g. a constant column).
 * Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_data_shape(ellipsa_shape_test *out, const ellipsa_matrix *data);

/**
 * @brief Mardia's skewness and kurtosis of the rows a Gaussian model was fitted on.
 *
 * data must be the fitting data (same rows, same columns, NaN rows
 * included). MCD-family models: the rows the final estimate used (complete
 * rows not flagged by the reweighting rule, d2 > chi2q(p, 0.975)). Because
 * these rows were selected by a distance cutoff, the tail of the bulk is
 * missing: when at least one row was flagged, the kurtosis is centred at its
 * expected value for a normal bulk cut at chi2q(p, 0.975) (the moments of the
 * truncated normal, Tallis 1963), approximate = 1, and both p-values are
 * approximate; in a seeded simulation
 * (normal rows, n = 200, p = 5) they were conservative (rejecting less often
 * than nominal). Classical and shrinkage models: all complete rows, as
 * ellipsa_data_shape().
 * @param[out] out Filled on success (struct_size set by the caller).
 * @param model    A Gaussian model (not a mixture).
 * @param data     The fitting data.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_SHAPE (column count,
 *   a row count that is not the model's (used + dropped), struct_size too small);
 *   ::ELLIPSA_ERR_STATE (a mixture model); ::ELLIPSA_ERR_DATA (an infinite
 *   value, fewer than p + 2 rows); ::ELLIPSA_NUM_SINGULAR.
 * Thread-safe on a shared model.
 */
ELLIPSA_API ellipsa_status ellipsa_model_shape(ellipsa_shape_test *out, const ellipsa_model *model,
                                               const ellipsa_matrix *data);
/** @} */

/* ======================================================================== */
/** @name Model files
 *  The model file is JSON (UTF-8), described in docs/model-format.md, with a
 *  "format_version" field. Each number is written in the shortest decimal form
 *  that reads back to the same double (at most 17 significant digits, e.g.
 *  0.1 as "0.1"), so save -> load -> save gives identical bytes and a loaded
 *  model gives bit-identical scores.
 *  @{ */
/**
 * @brief Serialises a model to JSON text.
 * @param[out] text   NUL-terminated UTF-8, allocated by the library; free it with
 *                    ellipsa_text_free().
 * @param[out] length Bytes in text without the terminating NUL (may be NULL).
 * @param model       The model.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_model_save(char **text, int64_t *length,
                                              const ellipsa_model *model);

/**
 * @brief Frees text or bytes returned by the library; NULL is a no-op.
 * @param text Text from ellipsa_model_save(), bytes from
 *             ellipsa_accumulator_save(), or NULL.
 */
ELLIPSA_API void ellipsa_text_free(char *text);

/**
 * @brief Reads a model from JSON text written by ellipsa_model_save() (any binding).
 *
 * Everything is checked: format version, kind, method, dimensions, finite
 * numbers, symmetric positive definite scatter matrices, weights summing to 1.
 * @param[out] out  The model, or NULL on failure.
 * @param text      The bytes (need not be NUL-terminated).
 * @param length    Number of bytes, 0 < length <= 1 GiB.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (length);
 *         ::ELLIPSA_ERR_FORMAT (the message says what is wrong and where);
 *         ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_model_load(ellipsa_model **out, const char *text,
                                              int64_t length);
/** @} */

/* ======================================================================== */
/** @name Sheet functions
 *  A catalog of functions for spreadsheet hosts, described by the library
 *  itself, and one entry point that evaluates any of them on cell-like
 *  inputs. A host adapter reads the catalog (names, help, arguments, result
 *  shapes), registers every function with its host, and on each call converts
 *  the cells into ::ellipsa_sheet_value arguments, asks for the result shape,
 *  and evaluates into an array of ::ellipsa_sheet_cell. It holds no code per
 *  function: a function added to the catalog appears in every host.
 *
 *  Sheet semantics, the same in every host:
 *  - A range is a matrix view with NaN for blank cells; text and error cells
 *    are NaN too and are marked in the value's cell_kind mask.
 *  - Fits use the complete rows of their range (rows with blank, text or error
 *    cells are left out). Scored rows with blanks are scored on their observed
 *    cells; a row with a text or error cell gets ::ELLIPSA_SHEET_ERROR_VALUE in
 *    that row only; a row with no observed cell stays empty.
 *  - An optional argument that is ::ELLIPSA_SHEET_VALUE_ABSENT, or an empty
 *    text, takes its default.
 *  - A failure of the whole function (a misspelt option, ranges whose shapes
 *    disagree, data a method cannot fit) is a status and a message naming the
 *    argument; the adapter shows it as one error value.
 *  Thread safety: the catalog is immutable; ellipsa_sheet_evaluate() may run
 *  on any number of threads at once, sharing one ::ellipsa_sheet_cache.
 *  @{ */
/** Kind of a catalog argument, and of a value passed for it. */
#define ELLIPSA_SHEET_VALUE_ABSENT 0 /**< A value: the optional argument was not given (default applies). */
#define ELLIPSA_SHEET_ARG_RANGE 1    /**< A block of cells (a single number is a 1 x 1 range). */
#define ELLIPSA_SHEET_ARG_NUMBER 2   /**< A number (a flag counts as 0/1; a text must read as a number). */
#define ELLIPSA_SHEET_ARG_TEXT 3     /**< A short text, e.g. a method name (a number is read as its text). */
#define ELLIPSA_SHEET_ARG_FLAG 4     /**< TRUE/FALSE (a number is true when non-zero). */

/** How a catalog function's result is shaped (n rows and p columns of its first range). */
#define ELLIPSA_SHEET_SHAPE_SCALAR 1     /**< One value. */
#define ELLIPSA_SHEET_SHAPE_PER_ROW 2    /**< n x 1: one value per row of the first range. */
#define ELLIPSA_SHEET_SHAPE_ROW_BLOCK 3  /**< n x q: several values per row (q = p, or K components). */
#define ELLIPSA_SHEET_SHAPE_PER_COLUMN 4 /**< 1 x p: one value per column. */
#define ELLIPSA_SHEET_SHAPE_SQUARE 5     /**< p x p. */
#define ELLIPSA_SHEET_SHAPE_TABLE 6      /**< A table whose first row holds column titles. */

/** What an input cell held, for the cell_kind mask of a range value. */
#define ELLIPSA_SHEET_INPUT_NUMBER 0 /**< A number, or blank (then NaN in the view). */
#define ELLIPSA_SHEET_INPUT_TEXT 1   /**< Text in a numeric range. */
#define ELLIPSA_SHEET_INPUT_ERROR 2  /**< An error value of the host. */

/** Type of a result cell. */
#define ELLIPSA_SHEET_CELL_EMPTY 0  /**< Nothing to show (a blank row, or space beyond the result). */
#define ELLIPSA_SHEET_CELL_NUMBER 1 /**< `number` holds the value. */
#define ELLIPSA_SHEET_CELL_TEXT 2   /**< `text` holds the value (table titles and names). */
#define ELLIPSA_SHEET_CELL_ERROR 3  /**< `error` says which error value to show. */

/** Error value of a result cell, as spreadsheets name them. */
#define ELLIPSA_SHEET_ERROR_VALUE 1 /**< "#VALUE!": the row holds text or an error value. */
#define ELLIPSA_SHEET_ERROR_NUM 2   /**< "#NUM!": no finite result (e.g. a distance the scatter cannot give). */
#define ELLIPSA_SHEET_ERROR_NA 3    /**< "#N/A": not applicable to this row or model. */

/** Description of one catalog function. Grows only at the end. */
typedef struct ellipsa_sheet_function_info {
  int64_t struct_size;    /**< Set to sizeof(ellipsa_sheet_function_info) by the caller. */
  const char *name;       /**< Upper-case name, e.g. "ELL.DIST2"; static. */
  const char *category;   /**< Category for the host's function list; static. */
  const char *help;       /**< One-line help; static. */
  int32_t argument_count; /**< Number of arguments (required ones first). */
  int32_t required_count; /**< Number of required arguments. */
  int32_t result_shape;   /**< An ELLIPSA_SHEET_SHAPE_ value. */
} ellipsa_sheet_function_info;

/** Description of one argument of a catalog function. Grows only at the end. */
typedef struct ellipsa_sheet_argument_info {
  int64_t struct_size;      /**< Set to sizeof(ellipsa_sheet_argument_info) by the caller. */
  const char *name;         /**< Lower-case name, e.g. "level"; static. */
  const char *help;         /**< One-line help; static. */
  int32_t kind;             /**< An ELLIPSA_SHEET_ARG_ value. */
  int32_t optional;         /**< 1 when the argument may be left out. */
  const char *default_text; /**< How the default reads (e.g. "0.975"); "" for required ones; static. */
} ellipsa_sheet_argument_info;

/**
 * @brief Number of functions in the catalog.
 * @param[out] count The count (>= 1).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL. Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_function_count(int32_t *count);

/**
 * @brief Describes catalog function `index`.
 *
 * Only the fields that fit in the caller's struct_size are written, so a
 * caller compiled against an older, shorter struct keeps working; struct_size
 * is then set to the bytes written.
 * @param[out] out    The description; out->struct_size must be set and at least
 *                    the size of the first version (up to result_shape).
 * @param index       0 <= index < count.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (index);
 *         ::ELLIPSA_ERR_SHAPE (struct_size too small). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_function_describe(ellipsa_sheet_function_info *out,
                                                           int32_t index);

/**
 * @brief Describes argument `argument` of catalog function `index`.
 * @param[out] out  The description; out->struct_size must be set (at least the
 *                  first version's size); only fields that fit are written and
 *                  struct_size is set to the bytes written.
 * @param index     Function, 0 <= index < count.
 * @param argument  0 <= argument < argument_count of that function.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (an index);
 *         ::ELLIPSA_ERR_SHAPE (struct_size too small). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_argument_describe(ellipsa_sheet_argument_info *out,
                                                           int32_t index, int32_t argument);

/**
 * @brief Index of the catalog function with this name (case-insensitive).
 * @param[out] index The index.
 * @param name       NUL-terminated name, e.g. "ell.dist2".
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (no such
 *         function; the message says so). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_function_find(int32_t *index, const char *name);

/**
 * @brief One argument value as a host passes it. Grows only at the end.
 *
 * Only the member that `kind` names is read. The library reads the pointers
 * during the call only.
 */
typedef struct ellipsa_sheet_value {
  int64_t struct_size;       /**< sizeof(ellipsa_sheet_value) as the caller compiled it; the same in every element of an array. */
  int32_t kind;              /**< ::ELLIPSA_SHEET_VALUE_ABSENT or an ELLIPSA_SHEET_ARG_ value. */
  ellipsa_matrix range;      /**< RANGE: the cells, NaN for blank, text and error cells. */
  const uint8_t *cell_kind;  /**< RANGE: NULL (all numbers or blank), or rows*cols bytes in row-major order, each an ELLIPSA_SHEET_INPUT_ value. */
  double number;             /**< NUMBER and FLAG. */
  const char *text;          /**< TEXT: NUL-terminated UTF-8. */
} ellipsa_sheet_value;

/** Initialiser for ::ellipsa_sheet_value: an absent argument. */
#define ELLIPSA_SHEET_VALUE_INIT \
  { (int64_t)sizeof(ellipsa_sheet_value), ELLIPSA_SHEET_VALUE_ABSENT, {NULL, 0, 0, 0, 0}, NULL, 0.0, NULL }

/** One result cell. This struct does not grow: a new layout would be a new type. */
typedef struct ellipsa_sheet_cell {
  int32_t type;     /**< An ELLIPSA_SHEET_CELL_ value. */
  int32_t error;    /**< For ::ELLIPSA_SHEET_CELL_ERROR: an ELLIPSA_SHEET_ERROR_ value; else 0. */
  double number;    /**< For ::ELLIPSA_SHEET_CELL_NUMBER. */
  const char *text; /**< For ::ELLIPSA_SHEET_CELL_TEXT: a static string owned by the library; else NULL. */
} ellipsa_sheet_cell;

/** Opaque, bounded, thread-safe cache of fits keyed by their data and options. */
typedef struct ellipsa_sheet_cache ellipsa_sheet_cache;

/**
 * @brief Creates a fit cache for ellipsa_sheet_evaluate().
 *
 * A sheet with a hundred formulas over one range then fits once: a fit is
 * reused when its data (bit for bit, after the sheet conversion) and its
 * options are equal. The least recently used fits are dropped to stay within
 * both bounds. Unlike other handles, a cache may be used by any number of
 * threads at once.
 * @param[out] out     The cache; destroy it with ellipsa_sheet_cache_destroy().
 * @param max_entries  Most fits kept, in [1, 100000].
 * @param max_bytes    Most bytes of copied data kept, >= 0 (0 keeps nothing
 *                     larger than 0 bytes, i.e. disables reuse).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT; ::ELLIPSA_ERR_MEMORY.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_cache_create(ellipsa_sheet_cache **out,
                                                      int64_t max_entries, int64_t max_bytes);

/**
 * @brief Destroys a cache and every fit it holds; NULL is a no-op.
 *
 * No ellipsa_sheet_evaluate() call may be using it.
 * @param cache The cache, or NULL.
 */
ELLIPSA_API void ellipsa_sheet_cache_destroy(ellipsa_sheet_cache *cache);

/**
 * @brief Counters of a cache: lookups that found a fit, lookups that fitted,
 *        fits held and bytes of data held. NULL out-pointers are skipped.
 * @param[out] hits    Lookups answered from the cache, or NULL.
 * @param[out] misses  Lookups that fitted, or NULL.
 * @param[out] entries Fits held now, or NULL.
 * @param[out] bytes   Bytes of copied data held now, or NULL.
 * @param cache        The cache.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL (cache). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_cache_stats(int64_t *hits, int64_t *misses,
                                                     int64_t *entries, int64_t *bytes,
                                                     const ellipsa_sheet_cache *cache);

/**
 * @brief Shape of the result of a catalog function for these arguments.
 *
 * Cheap: it checks the arguments and reads range sizes, never fits. The shape
 * of a mixture's memberships uses the largest K asked for; columns beyond the
 * chosen K are left empty.
 * @param[out] rows  Result rows.
 * @param[out] cols  Result columns.
 * @param index      Catalog function.
 * @param args       count values, in the catalog's argument order; trailing
 *                   optional ones may be left out (count smaller). NULL only
 *                   when count is 0.
 * @param count      Number of values, 0 <= count <= argument_count.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT (unknown
 *         function, a required argument missing, a value of the wrong kind or
 *         out of range, a misspelt option: the message names the argument);
 *         ::ELLIPSA_ERR_SHAPE (struct_size, ranges that must agree and do not,
 *         an empty range). Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_result_shape(int64_t *rows, int64_t *cols, int32_t index,
                                                      const ellipsa_sheet_value *args,
                                                      int32_t count);

/**
 * @brief Evaluates a catalog function into caller-allocated cells.
 *
 * Every number equals, bit for bit, what the ordinary C interface gives for
 * the same computation (ellipsa_model_fit() with the same options on the
 * complete rows, then ellipsa_model_score_v2(), a model query or a
 * distribution function). p-values and flags use the scoring reference of the
 * rows' role, as the batch tool does: ::ELLIPSA_REFERENCE_FITTING_ROWS for rows
 * screened against their own fit, ::ELLIPSA_REFERENCE_NEW_ROWS for rows scored
 * against a reference range, unless the function's `limit` argument names
 * another. Cells beyond the result shape are set to ::ELLIPSA_SHEET_CELL_EMPTY.
 * @param[out] cells  rows x cols cells, row-major; contents unspecified on failure.
 * @param rows        Rows of cells, >= the result rows.
 * @param cols        Columns of cells, >= the result columns.
 * @param cache       A fit cache shared by calls, or NULL to fit every time.
 * @param index       Catalog function.
 * @param args        As for ellipsa_sheet_result_shape().
 * @param count       As for ellipsa_sheet_result_shape().
 * @return ::ELLIPSA_OK (individual cells may still hold errors);
 *         every status of ellipsa_sheet_result_shape(); ::ELLIPSA_ERR_SHAPE
 *         (cells smaller than the result); the statuses of
 *         ellipsa_model_fit() for data that cannot be fitted (::ELLIPSA_ERR_DATA,
 *         ::ELLIPSA_NUM_SINGULAR, ::ELLIPSA_NUM_EXACT_FIT,
 *         ::ELLIPSA_NUM_NOT_CONVERGED); ::ELLIPSA_ERR_MEMORY. Thread-safe.
 */
ELLIPSA_API ellipsa_status ellipsa_sheet_evaluate(ellipsa_sheet_cell *cells, int64_t rows,
                                                  int64_t cols, ellipsa_sheet_cache *cache,
                                                  int32_t index, const ellipsa_sheet_value *args,
                                                  int32_t count);
/** @} */

#ifdef __cplusplus
} /* extern "C" */
#endif

#endif /* ELLIPSA_H */
