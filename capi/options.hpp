// The fit options handle behind the opaque ellipsa_fit_options.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include "ellipsa.h"

struct ellipsa_fit_options {
  ellipsa_method method = ELLIPSA_METHOD_CLASSICAL;
  int32_t divisor = ELLIPSA_DIVISOR_N_MINUS_1;
  int32_t missing = ELLIPSA_MISSING_DROP_ROWS;
  std::vector<std::string> column_names;
  double alpha = 0.5;
  bool alpha_set = false;  // MRCD's own default (0.75, Boudt et al. 2020) applies until set
  uint64_t seed = 0;
  int32_t k_min = 1;
  int32_t k_max = 1;
  int32_t structure = ELLIPSA_STRUCTURE_FULL;
  int32_t restarts = 5;
  int32_t starts = 500;  // FAST-MCD random starts (Rousseeuw & Van Driessen 1999 use 500)
  int32_t max_iterations = 500;
  double tolerance = 1e-6;
  double regularisation = 1e-6;
  int32_t small_sample = 1;                          // MCD, DetMCD: apply the small-sample factors
  int32_t consistency = ELLIPSA_CONSISTENCY_NORMAL;  // MCD, DetMCD: raw scatter scaling rule
  int32_t reference = ELLIPSA_REFERENCE_MODEL;       // MODEL = the default choice (score_reference.cpp)
  int32_t threads = 0;                               // 0 = ELLIPSA_THREADS or the available cores (capi/threads.hpp)
  int64_t memory_limit = 0;  // bytes; 0 = ELLIPSA_MEMORY_LIMIT or none (capi/memory_ceiling.hpp)
  ellipsa_progress_fn progress = nullptr;
  void* progress_user = nullptr;
};

namespace ellipsa::capi {
bool is_known_method(ellipsa_method m);
// "full", "diagonal", "tied", "spherical", "all" (ELLIPSA_STRUCTURE_ALL), or "unknown".
const char* structure_name(int32_t structure);
// The ELLIPSA_STRUCTURE_ value of a name, or 0; "all" only when allow_all.
int32_t structure_from_name(const std::string& name, bool allow_all);
// "drop", "refuse", "em", or "unknown".
const char* missing_name(int32_t policy);
}  // namespace ellipsa::capi
