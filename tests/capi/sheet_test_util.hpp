// Helpers for the sheet-catalog tests: argument values, result grids, and the
// catalog looked up by name. Through ellipsa.h only.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include "ellipsa.h"

namespace sheet_test {

inline ellipsa_sheet_value range(const double* data, int64_t rows, int64_t cols, const uint8_t* kinds = nullptr) {
  ellipsa_sheet_value v = ELLIPSA_SHEET_VALUE_INIT;
  v.kind = ELLIPSA_SHEET_ARG_RANGE;
  v.range = ellipsa_matrix_row_major(data, rows, cols);
  v.cell_kind = kinds;
  return v;
}
inline ellipsa_sheet_value number(double x) {
  ellipsa_sheet_value v = ELLIPSA_SHEET_VALUE_INIT;
  v.kind = ELLIPSA_SHEET_ARG_NUMBER;
  v.number = x;
  return v;
}
inline ellipsa_sheet_value text(const char* t) {
  ellipsa_sheet_value v = ELLIPSA_SHEET_VALUE_INIT;
  v.kind = ELLIPSA_SHEET_ARG_TEXT;
  v.text = t;
  return v;
}
inline ellipsa_sheet_value flag(bool b) {
  ellipsa_sheet_value v = ELLIPSA_SHEET_VALUE_INIT;
  v.kind = ELLIPSA_SHEET_ARG_FLAG;
  v.number = b ? 1.0 : 0.0;
  return v;
}
inline ellipsa_sheet_value absent() {
  ellipsa_sheet_value v = ELLIPSA_SHEET_VALUE_INIT;
  return v;
}

inline int32_t index_of(const char* name) {
  int32_t i = -1;
  return ellipsa_sheet_function_find(&i, name) == ELLIPSA_OK ? i : -1;
}

// The evaluated result with its shape, or the failing status.
struct Result {
  ellipsa_status status = ELLIPSA_OK;
  int64_t rows = 0, cols = 0;
  std::vector<ellipsa_sheet_cell> cells;
  std::string message;
  const ellipsa_sheet_cell& at(int64_t i, int64_t j) const { return cells[static_cast<size_t>(i * cols + j)]; }
};

inline Result evaluate(const char* name, const std::vector<ellipsa_sheet_value>& args,
                       ellipsa_sheet_cache* cache = nullptr) {
  Result r;
  const int32_t f = index_of(name);
  const auto count = static_cast<int32_t>(args.size());
  r.status = ellipsa_sheet_result_shape(&r.rows, &r.cols, f, args.data(), count);
  if (r.status == ELLIPSA_OK) {
    r.cells.resize(static_cast<size_t>(r.rows * r.cols));
    r.status = ellipsa_sheet_evaluate(r.cells.data(), r.rows, r.cols, cache, f, args.data(), count);
  }
  if (r.status != ELLIPSA_OK) r.message = ellipsa_last_error();
  return r;
}

}  // namespace sheet_test
