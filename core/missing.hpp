// Missing values: NaN marks a missing entry; +-Inf is not "missing" but a value
// the estimators cannot use, and is reported as such so that a division by zero
// upstream is not silently treated like an empty cell. Nothing here imputes.
#pragma once
#include <Eigen/Core>
#include <vector>

#include "data_view.hpp"

namespace ellipsa::core {

// Whether every entry of x is finite, in one vectorised pass in the order
// the entries lie in memory (no NaN, no +-Inf).
bool all_finite_in_memory_order(DataView x);

// Rows whose chosen columns are all finite.
struct CompleteRows {
  std::vector<Index> rows;                 // ascending row indices (0-based)
  Index dropped = 0;                       // rows with a NaN in a chosen column
  std::vector<Index> all_missing_columns;  // chosen columns that are NaN in every row
};

// Scans the chosen columns (all columns when `columns` is empty) of x. Throws
// LocatedError(Data) at the first +-Inf (row, column), Error(Argument) for a column
// index out of range. A column that is missing in every row makes every row
// incomplete; it is listed so that the caller can say why nothing is left.
CompleteRows select_complete_rows(DataView x, const std::vector<Index>& columns = {});

// Columns (0-based) that are NaN in every row. With zero rows every column counts.
std::vector<Index> all_missing_columns(DataView x);

// Copies the listed rows and columns (all columns when `columns` is empty) of x
// into a dense column-major matrix, in the order given.
Eigen::MatrixXd gather(DataView x, const std::vector<Index>& rows, const std::vector<Index>& columns = {});

// Throws LocatedError(Data) at the first entry of x that is NaN ("missing") or
// +-Inf ("infinite"); `what` names the caller in the message.
void require_finite(DataView x, const char* what);

// Throws LocatedError(Data) for the infinite value v at (row, col): the one
// wording of an infinite cell ("is infinite (+Inf); NaN marks a missing value,
// Inf is not accepted").
[[noreturn]] void throw_infinite_cell(const char* what, Index row, Index col, double v);

// Rows that share the same set of observed coordinates.
struct MissingPattern {
  std::vector<Index> observed;  // column indices, increasing
  std::vector<Index> missing;   // column indices, increasing
  std::vector<Index> rows;      // row indices, in the order scanned
};

struct MissingLayout {
  std::vector<MissingPattern> patterns;  // every scanned row with at least one observed value
  std::vector<Index> all_missing_rows;   // scanned rows with no observed value
  Index incomplete_rows = 0;             // scanned rows with at least one NaN (incl. all-missing)
};

// Groups the rows of x by their missing pattern (NaN = missing), the one
// grouping the mixture fit, mixture scoring and the single-profile scorer
// share. Patterns come in the order of the pattern (not of the rows), so the
// layout is the same on every run. Throws LocatedError(Data) at the first +-Inf
// (throw_infinite_cell with `what`).
MissingLayout group_missing_patterns(DataView x, const char* what);
// The same over the listed rows only (each row index in 0..n-1).
MissingLayout group_missing_patterns(DataView x, const std::vector<Index>& rows, const char* what);

}  // namespace ellipsa::core
