// Why a scatter matrix cannot be factored: which columns are constant and
// which groups of columns are (nearly) linearly dependent. A singular scatter is
// a normal outcome of real data (a duplicated column, a total column, n <= p),
// so the diagnosis is a result for the user, not an exception.
#pragma once
#include <Eigen/Core>
#include <string>
#include <vector>

#include "data_view.hpp"

namespace ellipsa::core {

struct SingularityOptions {
  // A direction is degenerate when its eigenvalue of the correlation matrix is
  // below relative_tolerance * (largest eigenvalue). Distances computed with a
  // scatter past this bound keep fewer than about 6 correct digits.
  double relative_tolerance = 1e-10;
  // Column j belongs to a collinear group when P_jj > loading_threshold, P the
  // projector onto the degenerate eigenvectors (sum of squared loadings, so the
  // test does not depend on how a repeated eigenvalue's vectors are chosen).
  double loading_threshold = 0.01;
  // Column numbers in the message start here (1 for a user-facing message).
  Index index_base = 0;
};

struct CollinearGroup {
  std::vector<Index> columns;  // 0-based, ascending
  Index dimension = 0;         // number of degenerate directions within the group
};

struct SingularityReport {
  bool singular = false;                // a constant column or a degenerate direction
  std::vector<Index> constant_columns;  // variance <= 0 (0-based)
  std::vector<CollinearGroup> collinear_groups;
  // Smallest / largest eigenvalue of the correlation matrix of the non-constant
  // columns (1 with one such column, 0 when none remains).
  double eigenvalue_ratio = 1.0;
  std::string message;  // empty when not singular
};

// Diagnoses a symmetric scatter matrix (covariance of any normalisation).
// Throws Error(Shape) when not square, Error(Data) when it has a NaN/Inf entry,
// Error(Argument) for a tolerance outside (0, 1) or a threshold outside (0, 1).
SingularityReport diagnose_scatter(const Eigen::MatrixXd& s, const SingularityOptions& options = {});

}  // namespace ellipsa::core
