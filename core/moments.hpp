// Mean and centred cross-products, accumulated in chunks and merged by the
// pairwise update of Chan, Golub & LeVeque (1979). Chunked, streaming, threaded
// and distributed fitting, the MCD reweighting and the EM M-step all use this one
// accumulator, so its accuracy is the accuracy of everything built on it.
#pragma once
#include <Eigen/Core>
#include <vector>

#include "data_view.hpp"

namespace ellipsa::core {

// Which divisor a covariance uses. With weights, "ByWeight" divides by the sum of
// weights (the maximum-likelihood / reliability-weight form) and
// "ByWeightMinusOne" by (sum of weights - 1), which is the unbiased estimate when
// the weights are frequency counts.
enum class Normalisation { ByCount, ByCountMinusOne };

// Facts about the raw data that MomentAccumulator::add reads anyway, handed to a
// caller that must screen its input (finite values, non-constant columns)
// without a second pass over the data.
struct ColumnScreen {
  // True when every column sum of the raw data is finite, which implies that
  // every entry is finite. False when some entry is NaN or +-Inf, or (values
  // near the largest double only) when a column sum overflowed: a caller that
  // needs to tell these apart scans the data (require_finite in missing.hpp).
  bool finite = true;
  // Smallest and largest entry of each column; meaningful when every entry is
  // finite. A column is constant exactly when min == max (+0 == -0).
  Eigen::VectorXd min, max;
};

class MomentAccumulator {
 public:
  explicit MomentAccumulator(Index p = 0);

  Index dimension() const { return mean_.size(); }
  // Sum of weights (the row count when unweighted).
  double weight_sum() const { return weight_; }
  // Rows added with a positive weight.
  Index rows() const { return rows_; }
  // Rows whose cross-products came from the product of the raw (uncentred)
  // data, the fast path of add(); see moments.cpp for when it is taken and its
  // error bound. A diagnostic: the moments do not depend on it beyond rounding.
  Index direct_rows() const { return direct_rows_; }
  const Eigen::VectorXd& mean() const { return mean_; }
  // Threads add() may use (1 by default; parallel.hpp). Chunk boundaries and
  // the merge order do not depend on it, so neither do the moments.
  void set_threads(int threads) { threads_ = threads; }
  int threads() const { return threads_; }
  // sum_i w_i (x_i - mean)(x_i - mean)', full symmetric matrix.
  Eigen::MatrixXd cross_products() const;

  // Adds every row of x with weight 1. Rows must be finite (not checked here:
  // the callers screen missing values first, or pass `screen`, which is filled
  // from the same pass over the data; non-finite rows give non-finite moments).
  void add(DataView x, ColumnScreen* screen = nullptr);
  // Adds row i of x with weight w(i); weights must be finite and >= 0.
  void add(DataView x, const Eigen::Ref<const Eigen::VectorXd>& w);
  // Adds the accumulated moments of another accumulator of the same dimension.
  void merge(const MomentAccumulator& other);
  // Merges raw moments (count, mean, centred cross-products) from elsewhere,
  // e.g. a partial result received from another process.
  void merge(double weight, Index rows, const Eigen::VectorXd& mean, const Eigen::MatrixXd& cross_products);

  // Covariance under the chosen divisor. Throws Error(Data) when the divisor is
  // not positive (fewer than 2 rows for ByCountMinusOne, no weight at all).
  Eigen::MatrixXd covariance(Normalisation norm) const;

  // The whole internal state, so that an accumulator can be stored or sent to
  // another process and rebuilt there bit for bit: later adds and merges then
  // give the same bits as on the original.
  struct State {
    double weight = 0.0;
    Index rows = 0;
    Index direct_rows = 0;
    bool shifted = false;
    Eigen::VectorXd shift;          // p
    Eigen::VectorXd relative_mean;  // p
    Eigen::MatrixXd lower;          // p x p, lower triangle authoritative
  };
  State state() const;
  // Rebuilds an accumulator from state(). Throws Error(Format) for a state no
  // accumulator can be in (sizes, non-finite values, negative counts or
  // weights, direct rows above rows, a negative diagonal of the cross-products,
  // rows without a shift).
  static MomentAccumulator from_state(const State& s);

 private:
  // Whether the moments so far put every column mean within kMaxOffsetRatio
  // standard deviations of zero (moments.cpp): the raw-product path may be tried.
  bool offset_allows_raw_product() const;
  // Merges moments whose mean is given relative to shift_.
  void merge_relative(double weight, Index rows, const Eigen::VectorXd& relative_mean,
                      const Eigen::MatrixXd& cross_products);

  int threads_ = 1;
  double weight_ = 0.0;
  Index rows_ = 0;
  Index direct_rows_ = 0;
  // Means are kept relative to a shift (the first row added): with data near
  // 1e9 and spread 1e-3 an absolute chunk mean carries a rounding error of
  // ulp(1e9)/2, which the merge term delta*delta' would amplify; differences of
  // nearby data rows and of the relative means are (nearly) exact.
  bool shifted_ = false;
  Eigen::VectorXd shift_;
  Eigen::VectorXd relative_mean_;
  Eigen::VectorXd mean_;   // shift_ + relative_mean_, as returned by mean()
  Eigen::MatrixXd lower_;  // lower triangle of the cross-products is authoritative
};

// Weighted mean and centred cross-products sum_i w_i (x_i - mean)(x_i - mean)'
// of one weighting of the rows.
struct WeightedMoments {
  double weight = 0.0;             // sum of the weights
  Eigen::VectorXd mean;            // zero when the weights sum to 0
  Eigen::MatrixXd cross_products;  // full symmetric, p x p; zero when the weights sum to 0
};

// The moments of the rows of x under every column of w (n x K, finite, >= 0) in
// one pass over x for all K weightings: the M-step of EM for complete rows.
// Weighting k is accumulated as shifted raw products about shifts.row(k) (K x p),
// which should be a point near its weighted mean (the previous EM mean); a row
// that is not finite selects the row of x with the largest weight k. When the
// weighted mean lies too far from its shift for the shifted products to keep
// their digits (moments.cpp), that weighting is recomputed by the centred path of
// MomentAccumulator::add(x, w). Throws Error(Shape) for mismatched sizes.
// `threads`: fixed chunks whose sums are added in chunk order (parallel.hpp),
// so the moments do not depend on it.
std::vector<WeightedMoments> weighted_moments(DataView x, const Eigen::MatrixXd& w, const Eigen::MatrixXd& shifts,
                                              int threads = 1);

// Rows start..start+m-1 of x into the first m rows of `raw`, column-major;
// its leading dimension is raw.rows() (a few spare rows when transposed, to
// keep the columns off a 4 KiB stride). Row-major views are transposed in
// small blocks that stay in L1.
void copy_rows_column_major(DataView x, Index start, Index m, Eigen::MatrixXd& raw);

// Chunks of the rows of x as column-major blocks for BLAS. Column-major caller
// data (unit row step, columns at least a chunk apart, an int leading
// dimension) are used in place; other layouts are copied chunk by chunk by
// copy_rows_column_major, so the arithmetic after block() is the same for
// every layout.
class ColumnMajorChunks {
 public:
  explicit ColumnMajorChunks(DataView x);
  bool in_place() const { return in_place_; }
  // Rows start..start+m-1: the block's first element; `ld` gets its leading dimension.
  const double* block(Index start, Index m, Index& ld);

 private:
  DataView x_;
  bool in_place_;
  Index ld_in_place_;
  Eigen::MatrixXd raw_;
};

// Convenience: mean and covariance of all rows of x in one call.
struct MeanCovariance {
  Eigen::VectorXd mean;
  Eigen::MatrixXd covariance;
};
MeanCovariance mean_covariance(DataView x, Normalisation norm);

}  // namespace ellipsa::core
