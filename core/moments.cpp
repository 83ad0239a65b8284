#include "moments.hpp"

#include <cblas.h>

#include <algorithm>
#include <cmath>

#include "error.hpp"

namespace ellipsa::core {
namespace {

// Rows per chunk: large enough that the rank-k update runs at BLAS-3 speed and
// the per-chunk overhead vanishes. 256..4096 measured within noise of each other
// in bench_classical (1e6 x 50); 4096 was the fastest.
constexpr Index kChunkRows = 4096;

// lower += c' c for a column-major chunk c (rows x p), lower triangle only.
void add_gram_lower(const Eigen::MatrixXd& c, Eigen::MatrixXd& lower) {
  if (c.rows() == 0 || c.cols() == 0) return;
  cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, static_cast<int>(c.cols()),
              static_cast<int>(c.rows()), 1.0, c.data(), static_cast<int>(c.rows()),
              1.0, lower.data(), static_cast<int>(lower.outerStride()));
}

}  // namespace

MomentAccumulator::MomentAccumulator(Index p)
    : shift_(Eigen::VectorXd::Zero(p)),
      relative_mean_(Eigen::VectorXd::Zero(p)),
      mean_(Eigen::VectorXd::Zero(p)),
      lower_(Eigen::MatrixXd::Zero(p, p)) {}

Eigen::MatrixXd MomentAccumulator::cross_products() const {
  Eigen::MatrixXd full = lower_.selfadjointView<Eigen::Lower>();
  return full;
}

void MomentAccumulator::merge_relative(double wb, Index rows_b, const Eigen::VectorXd& mb,
                                       const Eigen::MatrixXd& Mb) {
  if (!(wb > 0.0)) return;
  const double wa = weight_;
  const double w = wa + wb;
  // Chan, Golub & LeVeque (1979): m = ma + delta*wb/w,
  // M = Ma + Mb + delta*delta' * wa*wb/w.
  const Eigen::VectorXd delta = mb - relative_mean_;
  relative_mean_ += delta * (wb / w);
  mean_ = shift_ + relative_mean_;
  lower_.triangularView<Eigen::Lower>() += Mb;
  if (wa > 0.0)
    lower_.selfadjointView<Eigen::Lower>().rankUpdate(delta, wa * wb / w);
  weight_ = w;
  rows_ += rows_b;
}

void MomentAccumulator::merge(double wb, Index rows_b, const Eigen::VectorXd& mb,
                              const Eigen::MatrixXd& Mb) {
  if (mb.size() != dimension() || Mb.rows() != dimension() || Mb.cols() != dimension())
    throw Error(ErrorKind::Shape, "moment merge: dimensions differ");
  if (!(wb > 0.0)) return;
  if (!shifted_) {
    shift_ = mb;
    shifted_ = true;
  }
  merge_relative(wb, rows_b, mb - shift_, Mb);
}

void MomentAccumulator::merge(const MomentAccumulator& other) {
  if (other.dimension() != dimension()) throw Error(ErrorKind::Shape, "moment merge: dimensions differ");
  if (!(other.weight_ > 0.0)) return;
  if (!shifted_) {
    shift_ = other.shift_;
    shifted_ = true;
  }
  // Shifts are data rows, so their difference is exact for nearby data.
  merge_relative(other.weight_, other.rows_, (other.shift_ - shift_) + other.relative_mean_,
                 other.cross_products());
}

namespace {

// chunk = rows of src minus the shift, then centred by their own mean, which is
// returned (relative to the shift). Subtracting a data row first leaves values
// of the size of the spread, so their mean is accurate to eps*spread and one
// centring pass keeps every digit: the error it leaves in the cross-products is
// m*delta*delta', second order in that tiny delta.
template <class Source>
void shifted_centred_chunk(const Source& src, const Eigen::VectorXd& shift, Eigen::MatrixXd& chunk,
                           Eigen::RowVectorXd& mu) {
  chunk = src.rowwise() - shift.transpose();
  mu = chunk.colwise().mean();
  chunk.rowwise() -= mu;
}

}  // namespace

void MomentAccumulator::add(DataView x) {
  const Index p = dimension();
  if (x.cols() != p) throw Error(ErrorKind::Shape, "moment accumulator: column count differs");
  if (!shifted_ && x.rows() > 0) {
    shift_ = x.row(0).transpose();
    shifted_ = true;
  }
  // Contiguous columns (column-major caller data) take a map with a compile-time
  // unit inner stride, so the chunk copy vectorises.
  using ColumnMajor = Eigen::Map<const Eigen::MatrixXd, Eigen::Unaligned, Eigen::OuterStride<>>;
  const bool contiguous = x.innerStride() == 1;
  const ColumnMajor cm(x.data(), x.rows(), x.cols(), Eigen::OuterStride<>(contiguous ? x.outerStride() : 1));
  Eigen::MatrixXd chunk;
  Eigen::RowVectorXd mu;
  Eigen::MatrixXd gram(p, p);
  for (Index start = 0; start < x.rows(); start += kChunkRows) {
    const Index m = std::min(kChunkRows, x.rows() - start);
    if (contiguous)
      shifted_centred_chunk(cm.middleRows(start, m), shift_, chunk, mu);
    else
      shifted_centred_chunk(x.middleRows(start, m), shift_, chunk, mu);
    gram.setZero();
    add_gram_lower(chunk, gram);
    merge_relative(static_cast<double>(m), m, mu.transpose(), gram.selfadjointView<Eigen::Lower>());
  }
}

void MomentAccumulator::add(DataView x, const Eigen::Ref<const Eigen::VectorXd>& w) {
  const Index p = dimension();
  if (x.cols() != p) throw Error(ErrorKind::Shape, "moment accumulator: column count differs");
  if (w.size() != x.rows()) throw Error(ErrorKind::Shape, "moment accumulator: one weight per row");
  Eigen::MatrixXd chunk;
  Eigen::MatrixXd gram(p, p);
  for (Index start = 0; start < x.rows(); start += kChunkRows) {
    const Index m = std::min(kChunkRows, x.rows() - start);
    const auto wc = w.segment(start, m);
    const double ws = wc.sum();
    if (!(ws > 0.0)) continue;
    const Index positive = (wc.array() > 0.0).count();
    if (!shifted_) {
      Index first = 0;
      while (!(wc(first) > 0.0)) ++first;
      shift_ = x.row(start + first).transpose();
      shifted_ = true;
    }
    chunk = x.middleRows(start, m);
    chunk.rowwise() -= shift_.transpose();
    Eigen::RowVectorXd mu = (wc.transpose() * chunk) / ws;
    chunk.rowwise() -= mu;
    const Eigen::RowVectorXd correction = (wc.transpose() * chunk) / ws;
    chunk.rowwise() -= correction;
    mu += correction;
    chunk.array().colwise() *= wc.array().sqrt();
    gram.setZero();
    add_gram_lower(chunk, gram);
    merge_relative(ws, positive, mu.transpose(), gram.selfadjointView<Eigen::Lower>());
  }
}

Eigen::MatrixXd MomentAccumulator::covariance(Normalisation norm) const {
  const double divisor = norm == Normalisation::ByCount ? weight_ : weight_ - 1.0;
  if (!(divisor > 0.0))
    throw Error(ErrorKind::Data,
                norm == Normalisation::ByCount
                    ? "covariance needs at least one row with positive weight"
                    : "covariance with divisor n-1 needs a weight sum above 1 (at least 2 rows)");
  return cross_products() / divisor;
}

MeanCovariance mean_covariance(DataView x, Normalisation norm) {
  MomentAccumulator acc(x.cols());
  acc.add(x);
  return {acc.mean(), acc.covariance(norm)};
}

}  // namespace ellipsa::core
