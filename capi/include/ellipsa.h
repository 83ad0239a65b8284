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
 * - No call aborts, exits, prints or lets a C++ exception escape.
 * - Handles are opaque; each `_destroy` accepts NULL and then does nothing.
 * - Matrices are passed as an ::ellipsa_matrix view (pointer, rows, cols, row
 *   stride, column stride), so row-major, column-major and sliced buffers are
 *   read in place. Rows are observations, columns are variables.
 * - Missing values are NaN. Each function states what it does with them.
 * - Buffers for results are allocated by the caller with the documented size.
 *   Memory that the library allocates has its own free function.
 * - Threads: no global mutable state. A handle is used by one thread at a time;
 *   a fitted ::ellipsa_model is read-only and may be shared by any number of
 *   threads for queries and scoring. Randomness comes only from explicit seeds.
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
#define ELLIPSA_VERSION_MAJOR 0
#define ELLIPSA_VERSION_MINOR 1
#define ELLIPSA_VERSION_PATCH 0
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
#define ELLIPSA_NUM_NOT_CONVERGED 21 /**< An iteration reached its cap before its tolerance. */
#define ELLIPSA_NUM_EXACT_FIT 22     /**< MCD: at least h rows lie on a hyperplane. */

/**
 * @brief A short constant name for a status code, e.g. "ELLIPSA_ERR_SHAPE".
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

/** A view of a C row-major array `data[rows][cols]`. */
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

/** A view of a column-major array (R, Fortran, Julia, spreadsheet ranges). */
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
 * @brief Called by long operations from the calling thread.
 *
 * @param stage    A short static description of the current stage (e.g.
 *                 "random starts"); never NULL; valid during the call only.
 * @param fraction Progress of the whole operation in [0, 1], non-decreasing.
 * @param user     The pointer given together with the callback.
 * @return 0 to continue; any other value cancels the operation, which then
 *         returns ::ELLIPSA_ERR_CANCELLED and produces no result.
 */
typedef int (*ellipsa_progress_fn)(const char *stage, double fraction, void *user);
/** @} */

/* ======================================================================== */
/** @name Distributions and control limits
 *  Thin, checked access to the distribution functions behind every p-value and
 *  cutoff (Boost.Math underneath). All are thread-safe and allocate nothing.
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
 * @param df1 Numerator degrees of freedom, finite and > 0.
 * @param df2 Denominator degrees of freedom, finite and > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_f_quantile(double *out, double probability, double df1,
                                              double df2);

/**
 * @brief Upper-tail probability P(X > x) of the F distribution.
 * @param[out] out The probability in [0, 1].
 * @param x   Any value except NaN.
 * @param df1 Numerator degrees of freedom, finite and > 0.
 * @param df2 Denominator degrees of freedom, finite and > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_f_tail(double *out, double x, double df1, double df2);

/**
 * @brief Quantile of the Beta(a, b) distribution.
 * @param[out] out The quantile in [0, 1].
 * @param probability In [0, 1].
 * @param a First shape, finite and > 0.
 * @param b Second shape, finite and > 0.
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT.
 */
ELLIPSA_API ellipsa_status ellipsa_beta_quantile(double *out, double probability, double a,
                                                 double b);

/**
 * @brief Upper-tail probability P(X > x) of the Beta(a, b) distribution.
 * @param[out] out The probability in [0, 1].
 * @param x Any value except NaN.
 * @param a First shape, finite and > 0.
 * @param b Second shape, finite and > 0.
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
 * @param p          Variables, >= 1.
 * @param alpha      False-alarm probability per row, in (0, 1).
 * @return ::ELLIPSA_OK; ::ELLIPSA_ERR_NULL; ::ELLIPSA_ERR_ARGUMENT for an unknown
 *         phase, alpha outside (0,1) or m too small for p.
 */
ELLIPSA_API ellipsa_status ellipsa_hotelling_limit(double *out, int32_t phase, int64_t m,
                                                   int64_t p, double alpha);
/** @} */

#ifdef __cplusplus
} /* extern "C" */
#endif

#endif /* ELLIPSA_H */
