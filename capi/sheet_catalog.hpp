// The sheet-function catalog: one table that says, for every function a
// spreadsheet host can call, its name, help, arguments and result shape, and
// which evaluator computes it. Hosts read this table through the C interface
// (ellipsa_sheet_function_describe ...), so a row added here appears in every
// host; the evaluators live in sheet_screen.cpp, sheet_regime.cpp and
// sheet_limits.cpp.
#pragma once
#include <cstdint>
#include <vector>

#include "ellipsa.h"

namespace ellipsa::capi::sheet {

class Arguments;
class Grid;

struct ArgumentSpec {
  const char* name;
  const char* help;
  int32_t kind;  // ELLIPSA_SHEET_ARG_
  bool optional;
  const char* default_text;  // "" when required
};

// Result size for resolved arguments (never fits).
using ShapeFn = void (*)(const Arguments&, int64_t* rows, int64_t* cols);
// Fills the grid (already sized and emptied) from resolved arguments.
using EvaluateFn = void (*)(const Arguments&, ellipsa_sheet_cache*, Grid&);

struct FunctionSpec {
  const char* name;
  const char* category;
  const char* help;
  std::vector<ArgumentSpec> arguments;  // required ones first
  int32_t shape;                        // ELLIPSA_SHEET_SHAPE_
  ShapeFn shape_of;
  EvaluateFn evaluate;
};

const std::vector<FunctionSpec>& catalog();
// Throws Misuse(ARGUMENT) for an index outside the catalog.
const FunctionSpec& function_at(int32_t index);

// Evaluators and shapes, one group per file.
void shape_per_row(const Arguments&, int64_t*, int64_t*);
void shape_row_block_p(const Arguments&, int64_t*, int64_t*);
void shape_per_column(const Arguments&, int64_t*, int64_t*);
void shape_square(const Arguments&, int64_t*, int64_t*);
void shape_scalar(const Arguments&, int64_t*, int64_t*);
void shape_memberships(const Arguments&, int64_t*, int64_t*);
void shape_selection_table(const Arguments&, int64_t*, int64_t*);

void eval_distance(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_p_value(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_flag(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_driver(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_contributions(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_center(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_scatter(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_shrinkage(const Arguments&, ellipsa_sheet_cache*, Grid&);

void eval_regime(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_membership(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_selection_table(const Arguments&, ellipsa_sheet_cache*, Grid&);

void eval_t2_limit(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_chi2_quantile(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_chi2_tail(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_f_quantile(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_f_tail(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_beta_quantile(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_beta_tail(const Arguments&, ellipsa_sheet_cache*, Grid&);
void eval_version(const Arguments&, ellipsa_sheet_cache*, Grid&);

}  // namespace ellipsa::capi::sheet
