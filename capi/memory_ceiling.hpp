// The memory ceiling of a fit: the working-memory estimate of each method
// (the formulas are documented with ellipsa_fit_memory_estimate() in
// ellipsa.h) and the refusal of a fit whose estimate exceeds the ceiling set
// in the options or in the environment variable ELLIPSA_MEMORY_LIMIT.
#pragma once
#include <cstdint>

#include "options.hpp"

namespace ellipsa::capi {

// Bytes a fit of n rows and p columns with these options may allocate at
// most (see ellipsa.h); INT64_MAX when the arithmetic overflows int64.
int64_t fit_memory_estimate(const ellipsa_fit_options& o, int64_t n, int64_t p);

// The ceiling in force: the options' if set (> 0), else ELLIPSA_MEMORY_LIMIT,
// else 0 (none). Throws Misuse(ELLIPSA_ERR_ARGUMENT) for an unreadable variable.
int64_t memory_ceiling(const ellipsa_fit_options& o);

// Throws Misuse(ELLIPSA_ERR_MEMORY) when the estimate exceeds the ceiling or
// overflows; called before the fit allocates anything that grows with n or p.
void require_within_ceiling(const ellipsa_fit_options& o, int64_t n, int64_t p);

}  // namespace ellipsa::capi
