// Scoring references of a model (capi/score_reference.cpp).
#pragma once
#include <cstdint>

#include "core/score_reference.hpp"
#include "model.hpp"

namespace ellipsa::capi {
const char* reference_name(int32_t reference);
bool reference_from_name(const char* name, int32_t* out);
// The reference rows m of a model's new-rows and fitting-rows distributions
// (score_reference.cpp says how each method counts them).
struct ReferenceRows {
  double new_rows = 0.0, fitting_rows = 0.0;
};
ReferenceRows reference_rows_of(const ellipsa_model& m);
// The core's reference for scoring m with `requested` (ELLIPSA_REFERENCE_MODEL:
// the recorded one). Throws Misuse: ERR_ARGUMENT for an unknown value,
// ERR_STATE for a reference the model cannot use.
core::ScoreReference score_reference(const ellipsa_model& m, int32_t requested);
}  // namespace ellipsa::capi
