// Between the C interface's model and the core's mixture types.
#pragma once
#include "core/mixture_em.hpp"
#include "model.hpp"

namespace ellipsa::capi {
core::MixtureModel to_core_mixture(const ellipsa_model& m);
core::CovarianceStructure to_core_structure(int32_t structure);
int32_t from_core_structure(core::CovarianceStructure s);
}  // namespace ellipsa::capi
