// Arguments of a sheet function, resolved against the catalog: kinds checked
// and converted the lenient way sheets expect (a number typed as text, a flag
// given as 0/1), defaults applied, ranges copied into column-major matrices
// with one state per row. Also the grid that evaluators write results into.
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "ellipsa.h"
#include "sheet_catalog.hpp"

namespace ellipsa::capi::sheet {

// What a row of a range holds, for the per-row results.
enum class RowState : uint8_t {
  Usable,  // at least one number, no text or error cell
  Blank,   // every cell blank: the row's results stay empty
  Bad,     // a text or error cell: the row's results are #VALUE!
};

struct SheetRange {
  Eigen::MatrixXd values;  // n x p, NaN for blank, text and error cells
  std::vector<RowState> rows;
  int64_t row_count() const { return values.rows(); }
  int64_t col_count() const { return values.cols(); }
  ellipsa_matrix view() const;  // column-major view of values
};

class Arguments {
 public:
  // Throws Misuse naming the argument for a missing required value, a value of
  // the wrong kind, an empty range, or more values than the function takes.
  Arguments(const FunctionSpec& function, const ellipsa_sheet_value* values, int32_t count);

  const FunctionSpec& function() const { return *function_; }
  bool given(const char* name) const;
  // The range named (required, or given); throws when an optional one is absent.
  const SheetRange& range(const char* name) const;
  const SheetRange* range_if_given(const char* name) const;
  std::optional<double> number(const char* name) const;
  double number_or(const char* name, double fallback) const;
  // A whole number in [lo, hi]; throws Misuse naming the argument otherwise.
  std::optional<int64_t> whole_number(const char* name, int64_t lo, int64_t hi) const;
  std::optional<std::string> text(const char* name) const;
  bool flag_or(const char* name, bool fallback) const;

  // "rows" against "reference": same column count, else Misuse(SHAPE).
  const SheetRange& fitting_range() const;

 private:
  struct Resolved {
    bool given = false;
    int32_t kind = ELLIPSA_SHEET_VALUE_ABSENT;
    SheetRange range;
    double number = 0.0;
    std::string text;
  };
  const Resolved& slot(const char* name) const;
  const FunctionSpec* function_;
  std::vector<Resolved> slots_;
};

// rows x cols of caller cells; evaluators write inside the result shape only.
class Grid {
 public:
  Grid(ellipsa_sheet_cell* cells, int64_t rows, int64_t cols);
  void number(int64_t i, int64_t j, double v);  // non-finite -> #NUM!
  void text(int64_t i, int64_t j, const char* t);
  void error(int64_t i, int64_t j, int32_t code);
  void empty(int64_t i, int64_t j);

 private:
  ellipsa_sheet_cell& at(int64_t i, int64_t j);
  ellipsa_sheet_cell* cells_;
  int64_t rows_, cols_;
};

}  // namespace ellipsa::capi::sheet
