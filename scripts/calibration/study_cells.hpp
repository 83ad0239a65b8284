// One cell of the calibration study: a method, a bulk shape, n, p and a use
// (self-screening or fresh rows), run through the C interface exactly as a
// user would call it, and the flag rate it produced.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include "ellipsa.h"
#include "sampling.hpp"

namespace ellipsa::calibration {

enum class Use {
  Self,   // fit on n rows, score the same n rows (screening a data set)
  Fresh,  // fit on n reference rows, score new rows from the same process
};
const char* use_name(Use u);

// Settings a cell passes to the library. Negative values leave the library's
// default in place (so the default configuration is what is measured).
struct CellSettings {
  ellipsa_method method = ELLIPSA_METHOD_MCD;
  double level = 0.975;
  uint64_t seed = 1;         // base seed of the study; each replicate derives its own
  int64_t fresh_rows = 200;  // rows scored per replicate in the fresh use
  int32_t correction = -1;   // ellipsa_fit_options_set_small_sample: 0 off, 1 on
  int32_t consistency = -1;  // ellipsa_fit_options_set_consistency: ELLIPSA_CONSISTENCY_*
  int32_t reference = -1;    // ELLIPSA_REFERENCE_* passed to ellipsa_model_score_v2
};

struct CellResult {
  int64_t replicates = 0;
  int64_t failed = 0;  // fits the library refused (counted, not scored)
  int64_t rows = 0;    // rows scored
  int64_t flagged = 0;
  double rate() const { return rows > 0 ? static_cast<double>(flagged) / static_cast<double>(rows) : 0.0; }
  // Standard error of the rate from the spread of the replicate rates (rows of
  // one replicate share a fit, so they are not independent).
  double standard_error = 0.0;
};

// Runs `replicates` replicates of one cell. Throws std::runtime_error with the
// library's message on a misuse status (a bug in the study, not in the data).
CellResult run_cell(Bulk bulk, int64_t n, int64_t p, Use use, int64_t replicates, const CellSettings& s);

// Squared distances of the scored rows of a cell pooled over replicates, with
// the library's scoring of each fit (the same fits and rows as run_cell).
std::vector<double> pooled_distances(Bulk bulk, int64_t n, int64_t p, Use use, int64_t replicates,
                                     const CellSettings& s);

// The methods that can fit n x p data: every method needs n > p except the
// shrinkage ones and MRCD, which the study runs only where p is close to n.
bool method_applies(ellipsa_method m, int64_t n, int64_t p);

}  // namespace ellipsa::calibration
