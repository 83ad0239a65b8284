// Pieces shared by the three Minimum Covariance Determinant algorithms
// (FAST-MCD, DetMCD, MRCD): the result type, the subset size h, the C-step,
// the consistency and reweighting factors, exact-fit detection and the
// final reweighting step.
//
// Units. The algorithms work on column-standardised data internally (for
// numerical range and for the exact-fit test); every field of RobustFit is in
// the caller's original units.
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "cholesky.hpp"
#include "data_view.hpp"

namespace ellipsa::core {

// Called at stage boundaries with a fraction in [0, 1]; returning false stops
// the fit with Error(ErrorKind::Cancelled). May be empty.
using ProgressCallback = std::function<bool(const char* stage, double fraction)>;

// A hyperplane {x : normal' x = offset} in original units, unit-length normal.
struct Hyperplane {
  Eigen::VectorXd normal;
  double offset = 0.0;
  // Rows with |normal' x - offset| <= tolerance (always >= h on an exact fit).
  Index rows_on = 0;
  double tolerance = 0.0;
  // normal' x_i - offset for every row (signed orthogonal distance).
  Eigen::VectorXd residual;
};

// Result of every MCD variant.
//
// Regular fit (exact_fit == false):
//   raw_location, raw_scatter: mean of the optimal h-subset and its covariance
//     (divisor h) multiplied by consistency_factor (Croux & Haesbroeck 1999).
//   raw_d2: squared Mahalanobis distance of every row under the raw estimate.
//   outlier[i]: raw_d2[i] > chi2q(p, reweight_level) (the reweighting flags).
//   location, scatter: mean and covariance (divisor = number of rows kept) of
//     the rows not flagged, scatter multiplied by reweight_factor; when that
//     covariance is singular, reweighted == false and they equal the raw ones.
//   robust_d2: squared distance of every row under (location, scatter).
//   raw_log_det: log det of the plain covariance (divisor h) of the h-subset,
//     i.e. the MCD objective, before any factor.
// Exact fit (exact_fit == true; at least h rows on a hyperplane, the MCD
// objective is 0 and no inverse exists):
//   hyperplane: the plane, with rows_on >= h and every row's residual.
//   raw_location, raw_scatter: mean and (singular) covariance, divisor h, of
//     the h-subset that revealed the plane (no consistency factor).
//   location, scatter: mean and (singular) covariance of all rows on the plane.
//   outlier[i]: row i is off the plane. raw_d2 and robust_d2 are empty,
//   raw_log_det = -infinity, consistency_factor = reweight_factor = 1.
// MRCD fills rho, target, condition_number (see mcd_regularised.hpp); for it
// location/scatter equal raw_location/raw_scatter (no reweighting).
struct RobustFit {
  Eigen::VectorXd location, raw_location;
  Eigen::MatrixXd scatter, raw_scatter;
  Index h = 0;
  std::vector<Index> h_subset;  // 0-based rows of the optimal h-subset, ascending
  std::vector<bool> outlier;
  Eigen::VectorXd raw_d2, robust_d2;
  double consistency_factor = 1.0;
  double reweight_factor = 1.0;
  double reweight_level = 0.975;
  bool reweighted = false;
  double raw_log_det = 0.0;
  bool exact_fit = false;
  Hyperplane hyperplane;
  // MRCD only.
  double rho = 0.0;
  std::string target;
  double condition_number = 0.0;
  // Work done: C-steps over all starts, and the number of starts evaluated.
  int iterations = 0;
  int starts = 0;
};

// h = floor(2 floor((n+p+1)/2) - n + 2 (n - floor((n+p+1)/2)) alpha):
// floor((n+p+1)/2) at alpha = 0.5 (highest breakdown), n at alpha = 1.
// Throws Error(Argument) for alpha outside [0.5, 1].
Index mcd_subset_size(Index n, Index p, double alpha);

// Croux & Haesbroeck (1999): c = (h/n) / F_{chi2, p+2}(chi2q(p, h/n)); 1 when h = n.
double mcd_consistency_factor(Index h, Index n, Index p);

// The same correction for a hard rejection at chi2q(p, level):
// level / F_{chi2, p+2}(chi2q(p, level)).
double reweight_consistency_factor(double level, Index p);


namespace mcd_detail {

// Smallest eigenvalue of a subset covariance, in units of the robust column
// variances (the data are standardised by median and MAD or Qn), at or below
// which the subset is treated as lying on a hyperplane (an exact fit): a
// spread of 1e-6 robust standard deviations across the plane. Absolute in
// those units, not relative to the largest eigenvalue, so that a subset that
// contains gross outliers (huge largest eigenvalue) is not mistaken for a plane.
inline constexpr double kExactFitEigenvalue = 1e-12;

void report_progress(const ProgressCallback& cb, const char* stage, double fraction);

// Input checks common to MCD and DetMCD (need_more_rows: n > p demanded).
void check_input(DataView x, double alpha, bool need_more_rows, const char* method);

// Column-wise robust standardisation z = (x - centre) / scale.
enum class ColumnScale { Mad, Qn };
struct Standardised {
  Eigen::MatrixXd z;
  Eigen::VectorXd centre, scale;
  Index constant_column = -1;  // a column with one value only (all rows on x_j = c)
};
Standardised standardise(DataView x, ColumnScale kind);

// Mean and covariance (divisor = subset size) of a subset of rows.
struct SubsetFit {
  std::vector<Index> rows;  // ascending
  Eigen::VectorXd mean;
  Eigen::MatrixXd cov;
  CholeskyFactor chol;
  Eigen::MatrixXd linv;  // L^-1 of chol (p x p lower), set when chol succeeded
  double log_det = 0.0;  // -inf when singular
  bool singular = false;
};
SubsetFit fit_subset(const Eigen::MatrixXd& z, std::vector<Index> rows);

// d2_i = |L^-1 (z_i - mean)|^2 for every row of z under a nonsingular fit,
// into d2 (resized), in row chunks with one small GEMM each.
void subset_distances(const Eigen::MatrixXd& z, const SubsetFit& fit, Eigen::VectorXd& d2);

// The h rows with the smallest d2, ascending by row. Rows tied at the cut are
// taken in lexicographic order of their values, so the chosen set does not
// depend on row order (identical rows are interchangeable).
std::vector<Index> smallest_h(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z);

// One C-step (Rousseeuw & Van Driessen 1999): distances of all rows of z under
// fit, the h smallest, their mean and covariance. Returns false when the
// subset did not change (a fixed point). fit must not be singular.
bool c_step(const Eigen::MatrixXd& z, Index h, SubsetFit& fit);

// C-steps until the subset repeats, the fit turns singular, or max_steps.
// Returns the number of steps taken.
int c_steps_to_convergence(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, int max_steps);

// A singular subset fit found on some stage's rows z_stage (a group, a pool or
// the full data) defines a hyperplane; if at least h rows of the full data z lie
// on it, returns the fit of the h of them nearest the plane (singular: an exact
// fit of the whole problem); otherwise an empty optional.
std::optional<SubsetFit> exact_fit_subset(const Eigen::MatrixXd& z, const Eigen::MatrixXd& z_stage,
                                          const SubsetFit& singular_fit, Index h);

// Final step of a regular fit: back to original units, consistency factor,
// reweighting at chi2q(p, level).
RobustFit finish_fit(DataView x, const Standardised& s, const SubsetFit& best, Index h,
                     double level);

// Result for an exact fit revealed by the (singular) subset fit `subset`.
RobustFit exact_fit_result(DataView x, const Standardised& s, const SubsetFit& subset, Index h);
// Exact fit when a whole column is constant (hyperplane x_j = value, all rows).
RobustFit constant_column_result(DataView x, const Standardised& s, Index h);

}  // namespace mcd_detail
}  // namespace ellipsa::core
