// Checks an ellipsa_matrix at the boundary and maps it for the core without a copy.
#pragma once
#include "core/data_view.hpp"
#include "ellipsa.h"

namespace ellipsa::capi {
// Throws Misuse for a NULL view, negative sizes or strides, a NULL data pointer
// with a non-empty shape, or an extent that overflows int64.
core::DataView checked_view(const ellipsa_matrix* m, const char* what);
}  // namespace ellipsa::capi
