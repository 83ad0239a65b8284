#include "classical.hpp"

#include <cmath>
#include <string>

#include "error.hpp"
#include "missing.hpp"

namespace ellipsa::core {
namespace {

void check_shape(DataView x) {
  if (x.cols() < 1) throw Error(ErrorKind::Shape, "classical estimate: no columns");
  if (x.rows() < 2)
    throw Error(ErrorKind::Data, "classical estimate: needs at least 2 rows, got " + std::to_string(x.rows()));
}

void throw_constant(Index j) {
  throw LocatedError(ErrorKind::Data, "classical estimate", -1, j, "is constant (zero variance)");
}

// A column is constant when every used row holds the same value. Tested on the
// data, not on the variance: rounding in the mean can leave a constant column
// with a variance of order (eps * value)^2 instead of an exact zero.
void check_not_constant(DataView x, const double* w) {
  for (Index j = 0; j < x.cols(); ++j) {
    bool seen = false, varies = false;
    double first = 0.0;
    for (Index i = 0; i < x.rows() && !varies; ++i) {
      if (w && !(w[i] > 0.0)) continue;
      if (!seen) {
        first = x(i, j);
        seen = true;
      } else varies = x(i, j) != first;
    }
    if (!varies) throw_constant(j);
  }
}

ClassicalEstimate finish(const MomentAccumulator& acc, Normalisation norm, Index p) {
  if (acc.rows() <= p)
    throw Error(ErrorKind::Data, "classical estimate: " + std::to_string(acc.rows()) + " rows for " +
                                     std::to_string(p) +
                                     " columns; with n <= p the covariance is singular, use a shrinkage "
                                     "estimate (Ledoit-Wolf or OAS) instead");
  ClassicalEstimate out;
  out.mean = acc.mean();
  out.covariance = acc.covariance(norm);
  // The data were checked for constant columns, so a zero (or infinite) variance
  // here is a variance outside the range of double: values of order 1e-160 and
  // below underflow when squared, values above 1e154 overflow.
  for (Index j = 0; j < p; ++j)
    if (!(out.covariance(j, j) > 0.0 && std::isfinite(out.covariance(j, j))))
      throw LocatedError(ErrorKind::Data, "classical estimate", -1, j,
                         "has a variance that underflows or overflows double precision; rescale the data");
  out.normalisation = norm;
  out.weight_sum = acc.weight_sum();
  out.rows = acc.rows();
  return out;
}

}  // namespace

ClassicalEstimate classical_estimate(DataView x, Normalisation norm, int threads) {
  check_shape(x);
  // The finite and constant-column checks come from the accumulator's own pass
  // over each chunk (while it is in cache) instead of two more passes over x.
  MomentAccumulator acc(x.cols());
  acc.set_threads(threads);
  ColumnScreen screen;
  acc.add(x, &screen);
  // Names the first NaN or +-Inf; returns only when every entry is finite and a
  // column sum merely overflowed (values near the largest double), which the
  // accumulator's shifted path handles.
  if (!screen.finite) require_finite(x, "classical estimate");
  for (Index j = 0; j < x.cols(); ++j)
    if (screen.min(j) == screen.max(j)) throw_constant(j);
  return finish(acc, norm, x.cols());
}

ClassicalEstimate classical_estimate(DataView x, const Eigen::Ref<const Eigen::VectorXd>& w, Normalisation norm) {
  if (w.size() != x.rows())
    throw Error(ErrorKind::Shape, "classical estimate: " + std::to_string(w.size()) + " weights for " +
                                      std::to_string(x.rows()) + " rows");
  check_shape(x);
  require_finite(x, "classical estimate");
  for (Index i = 0; i < w.size(); ++i)
    if (!(std::isfinite(w(i)) && w(i) >= 0.0))
      throw Error(ErrorKind::Argument,
                  "classical estimate: weight of row " + std::to_string(i) + " (0-based) is negative or not finite");
  const double total = w.sum();
  if (!(total > 0.0)) throw Error(ErrorKind::Data, "classical estimate: the weights sum to zero");
  if (norm == Normalisation::ByCountMinusOne && !(total > 1.0))
    throw Error(ErrorKind::Data,
                "classical estimate: unbiased (frequency-weight) covariance needs a weight sum above 1");
  const Eigen::VectorXd wc = w;
  check_not_constant(x, wc.data());
  MomentAccumulator acc(x.cols());
  acc.add(x, w);
  return finish(acc, norm, x.cols());
}

}  // namespace ellipsa::core
