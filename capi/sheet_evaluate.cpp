// The two entry points that hosts call for every formula: the result shape,
// then the evaluation into caller cells.
#include <cstdint>
#include <string>

#include "boundary.hpp"
#include "sheet_args.hpp"
#include "sheet_catalog.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace sheet = ellipsa::capi::sheet;

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_sheet_result_shape(int64_t* rows, int64_t* cols, int32_t index,
                                                      const ellipsa_sheet_value* args, int32_t count) {
  return guard("ellipsa_sheet_result_shape", [&] {
    require_not_null(rows, "rows");
    require_not_null(cols, "cols");
    const auto& f = sheet::function_at(index);
    const sheet::Arguments a(f, args, count);
    int64_t r = 0, c = 0;
    f.shape_of(a, &r, &c);
    *rows = r;
    *cols = c;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_sheet_evaluate(ellipsa_sheet_cell* cells, int64_t rows, int64_t cols,
                                                  ellipsa_sheet_cache* cache, int32_t index,
                                                  const ellipsa_sheet_value* args, int32_t count) {
  return guard("ellipsa_sheet_evaluate", [&] {
    if (rows < 0 || cols < 0 || (cols > 0 && rows > INT64_MAX / cols))
      throw Misuse{ELLIPSA_ERR_SHAPE, "rows and cols must be >= 0 and their product must fit in int64"};
    const auto& f = sheet::function_at(index);
    const sheet::Arguments a(f, args, count);
    int64_t need_rows = 0, need_cols = 0;
    f.shape_of(a, &need_rows, &need_cols);
    if (rows < need_rows || cols < need_cols)
      throw Misuse{ELLIPSA_ERR_SHAPE, std::string(f.name) + " needs " + std::to_string(need_rows) + " x " +
                                          std::to_string(need_cols) + " cells; " + std::to_string(rows) + " x " +
                                          std::to_string(cols) + " given"};
    require_not_null(cells, "cells");
    sheet::Grid grid(cells, rows, cols);
    f.evaluate(a, cache, grid);
    return ELLIPSA_OK;
  });
}

}  // extern "C"
