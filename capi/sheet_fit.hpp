// Fits for sheet functions: the options a sheet can set, read from the
// arguments; the fit itself through the ordinary C interface (so a sheet's
// numbers equal a C caller's bit for bit); and the bounded, thread-safe cache
// behind ellipsa_sheet_cache, keyed by the fitted data and the options.
#pragma once
#include <cstdint>
#include <memory>
#include <optional>

#include "ellipsa.h"
#include "sheet_args.hpp"

namespace ellipsa::capi::sheet {

struct FitRequest {
  ellipsa_method method = ELLIPSA_METHOD_MCD;
  std::optional<double> alpha;
  std::optional<uint64_t> seed;
  int32_t k_min = 1, k_max = 1;
  int32_t structure = ELLIPSA_STRUCTURE_FULL;
  bool operator==(const FitRequest&) const = default;
};

// method / alpha / seed of a Gaussian profile; `allowed` lists the methods the
// function accepts (message names them otherwise).
FitRequest gaussian_request(const Arguments& a, ellipsa_method default_method,
                            std::initializer_list<ellipsa_method> allowed);
// components / structure / seed of a mixture.
FitRequest mixture_request(const Arguments& a, int32_t default_structure);

using ModelPtr = std::shared_ptr<const ellipsa_model>;

// Throws the status of a failed C interface call with its message, prefixed
// by `what` (the argument or stage it concerns).
void check(ellipsa_status s, const char* what);

// The model for `data` under `request`: from the cache when an equal fit is
// held, else fitted (and kept). Throws Misuse with the fit's status and a
// message that names the argument `what`.
ModelPtr fitted(ellipsa_sheet_cache* cache, const SheetRange& data, const FitRequest& request, const char* what);

}  // namespace ellipsa::capi::sheet
