// Mean and centred cross-products, accumulated in chunks and merged by the
// pairwise update of Chan, Golub & LeVeque (1979). Chunked, streaming, threaded
// and distributed fitting, the MCD reweighting and the EM M-step all use this one
// accumulator, so its accuracy is the accuracy of everything built on it.
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"

namespace ellipsa::core {

// Which divisor a covariance uses. With weights, "ByWeight" divides by the sum of
// weights (the maximum-likelihood / reliability-weight form) and
// "ByWeightMinusOne" by (sum of weights - 1), which is the unbiased estimate when
// the weights are frequency counts.
enum class Normalisation { ByCount, ByCountMinusOne };

class MomentAccumulator {
 public:
  explicit MomentAccumulator(Index p = 0);

  Index dimension() const { return mean_.size(); }
  // Sum of weights (the row count when unweighted).
  double weight_sum() const { return weight_; }
  // Rows added with a positive weight.
  Index rows() const { return rows_; }
  const Eigen::VectorXd& mean() const { return mean_; }
  // sum_i w_i (x_i - mean)(x_i - mean)', full symmetric matrix.
  Eigen::MatrixXd cross_products() const;

  // Adds every row of x with weight 1. Rows must be finite (not checked here;
  // the callers screen missing values first).
  void add(DataView x);
  // Adds row i of x with weight w(i); weights must be finite and >= 0.
  void add(DataView x, const Eigen::Ref<const Eigen::VectorXd>& w);
  // Adds the accumulated moments of another accumulator of the same dimension.
  void merge(const MomentAccumulator& other);
  // Merges raw moments (count, mean, centred cross-products) from elsewhere,
  // e.g. a partial result received from another process.
  void merge(double weight, Index rows, const Eigen::VectorXd& mean,
             const Eigen::MatrixXd& cross_products);

  // Covariance under the chosen divisor. Throws Error(Data) when the divisor is
  // not positive (fewer than 2 rows for ByCountMinusOne, no weight at all).
  Eigen::MatrixXd covariance(Normalisation norm) const;

 private:
  // Merges moments whose mean is given relative to shift_.
  void merge_relative(double weight, Index rows, const Eigen::VectorXd& relative_mean,
                      const Eigen::MatrixXd& cross_products);

  double weight_ = 0.0;
  Index rows_ = 0;
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

// Convenience: mean and covariance of all rows of x in one call.
struct MeanCovariance {
  Eigen::VectorXd mean;
  Eigen::MatrixXd covariance;
};
MeanCovariance mean_covariance(DataView x, Normalisation norm);

}  // namespace ellipsa::core
