// How the core sees caller data: a read-only map with arbitrary row and column
// strides, so row-major, column-major and sliced buffers reach the numerics
// without a copy. Rows are observations, columns are variables.
#pragma once
#include <Eigen/Core>

namespace ellipsa::core {

using Index = Eigen::Index;
using Strides = Eigen::Stride<Eigen::Dynamic, Eigen::Dynamic>;
// Eigen's Stride is <outer, inner>: for a column-major map the inner stride is the
// step between consecutive rows of one column, the outer stride the step between
// columns.
using DataView = Eigen::Map<const Eigen::MatrixXd, Eigen::Unaligned, Strides>;

inline DataView make_view(const double* data, Index rows, Index cols, Index row_stride, Index col_stride) {
  return DataView(data, rows, cols, Strides(col_stride, row_stride));
}

inline DataView make_view(const Eigen::MatrixXd& m) {
  return DataView(m.data(), m.rows(), m.cols(), Strides(m.outerStride(), 1));
}

}  // namespace ellipsa::core
