// The streaming accumulator handle, shared by its functions (accumulator.cpp)
// and its byte form (accumulator_bytes.cpp).
#pragma once
#include <cstdint>

#include "core/moments.hpp"
#include "core/norm_power_sums.hpp"
#include "ellipsa.h"

struct ellipsa_accumulator {
  ellipsa::core::MomentAccumulator moments;
  ellipsa::core::NormPowerSums norms;  // about moments.mean() once rows were added
  int64_t skipped = 0;
};
