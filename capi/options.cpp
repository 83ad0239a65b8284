// Fit options: creation, typed setters and method names.
#include "options.hpp"

#include <cmath>
#include <initializer_list>
#include <cstring>
#include <new>

#include "boundary.hpp"
#include "name_table.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;

namespace ellipsa::capi {
namespace {
constexpr Named<ellipsa_method> kMethodNames[] = {{ELLIPSA_METHOD_CLASSICAL, "classical"},
                                                  {ELLIPSA_METHOD_LEDOIT_WOLF, "ledoit-wolf"},
                                                  {ELLIPSA_METHOD_OAS, "oas"},
                                                  {ELLIPSA_METHOD_MCD, "mcd"},
                                                  {ELLIPSA_METHOD_DETMCD, "detmcd"},
                                                  {ELLIPSA_METHOD_MRCD, "mrcd"},
                                                  {ELLIPSA_METHOD_MIXTURE, "mixture"}};
// The structures a single fit uses; ALL ("try each") is a selection setting
// only, accepted where allow_all says so.
constexpr Named<int32_t> kStructureNames[] = {{ELLIPSA_STRUCTURE_FULL, "full"},
                                              {ELLIPSA_STRUCTURE_DIAGONAL, "diagonal"},
                                              {ELLIPSA_STRUCTURE_TIED, "tied"},
                                              {ELLIPSA_STRUCTURE_SPHERICAL, "spherical"},
                                              {ELLIPSA_STRUCTURE_ALL, "all"}};
constexpr Named<int32_t> kMissingNames[] = {
    {ELLIPSA_MISSING_DROP_ROWS, "drop"}, {ELLIPSA_MISSING_REFUSE, "refuse"}, {ELLIPSA_MISSING_EM, "em"}};
}  // namespace

bool is_known_method(ellipsa_method m) { return has_value(kMethodNames, m); }

const char* method_name(ellipsa_method m) { return name_in(kMethodNames, m); }

bool method_from_name(const char* name, ellipsa_method* out) { return value_in(kMethodNames, name, out); }

const char* structure_name(int32_t structure) { return name_in(kStructureNames, structure); }

int32_t structure_from_name(const std::string& name, bool allow_all) {
  int32_t v = 0;
  if (!value_in(kStructureNames, name.c_str(), &v) || (v == ELLIPSA_STRUCTURE_ALL && !allow_all)) return 0;
  return v;
}

const char* missing_name(int32_t policy) { return name_in(kMissingNames, policy); }

}  // namespace ellipsa::capi

namespace {
template <class F>
ellipsa_status set(const char* fn, ellipsa_fit_options* o, F&& f) {
  return guard(fn, [&] {
    require_not_null(o, "options");
    f(*o);
    return ELLIPSA_OK;
  });
}
[[noreturn]] void bad(const char* message) { throw Misuse{ELLIPSA_ERR_ARGUMENT, message}; }

// A setting the handle's method does not use is refused, so that a typo in a
// caller (a seed for a deterministic method, components for a single Gaussian)
// cannot pass silently.
void require_method(const ellipsa_fit_options& o, std::initializer_list<ellipsa_method> allowed, const char* setting) {
  for (ellipsa_method m : allowed)
    if (o.method == m) return;
  std::string uses;
  for (ellipsa_method m : allowed) uses += std::string(uses.empty() ? "" : ", ") + ellipsa::capi::method_name(m);
  throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string(setting) + " does not apply to method " +
                                         ellipsa::capi::method_name(o.method) + " (it applies to " + uses + ")"};
}
constexpr std::initializer_list<ellipsa_method> kMcdFamily = {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD,
                                                              ELLIPSA_METHOD_MRCD};
}  // namespace

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_fit_options_create(ellipsa_fit_options** out, ellipsa_method method) {
  return guard("ellipsa_fit_options_create", [&] {
    require_not_null(out, "out");
    if (!ellipsa::capi::is_known_method(method)) bad("unknown method");
    auto* o = new ellipsa_fit_options();
    o->method = method;
    *out = o;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API void ellipsa_fit_options_destroy(ellipsa_fit_options* options) { delete options; }

ELLIPSA_API ellipsa_status ellipsa_method_from_name(ellipsa_method* out, const char* name) {
  return guard("ellipsa_method_from_name", [&] {
    require_not_null(out, "out");
    require_not_null(name, "name");
    ellipsa_method m{};
    if (!ellipsa::capi::method_from_name(name, &m))
      throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string("unknown method '") + name + "' (known: " +
                                             ellipsa::capi::known_names(ellipsa::capi::kMethodNames) + ")"};
    *out = m;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API const char* ellipsa_method_name(ellipsa_method method) { return ellipsa::capi::method_name(method); }

ELLIPSA_API const char* ellipsa_structure_name(int32_t structure) { return ellipsa::capi::structure_name(structure); }

ELLIPSA_API ellipsa_status ellipsa_structure_from_name(int32_t* out, const char* name) {
  return guard("ellipsa_structure_from_name", [&] {
    require_not_null(out, "out");
    require_not_null(name, "name");
    const int32_t s = ellipsa::capi::structure_from_name(name, true);
    if (s == 0)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string("unknown covariance structure '") + name + "' (known: " +
                                             ellipsa::capi::known_names(ellipsa::capi::kStructureNames) + ")"};
    *out = s;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API const char* ellipsa_missing_name(int32_t policy) { return ellipsa::capi::missing_name(policy); }

ELLIPSA_API ellipsa_status ellipsa_missing_from_name(int32_t* out, const char* name) {
  return guard("ellipsa_missing_from_name", [&] {
    require_not_null(out, "out");
    require_not_null(name, "name");
    if (ellipsa::capi::value_in(ellipsa::capi::kMissingNames, name, out)) return ELLIPSA_OK;
    throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string("unknown missing-value policy '") + name + "' (known: " +
                                           ellipsa::capi::known_names(ellipsa::capi::kMissingNames) + ")"};
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_divisor(ellipsa_fit_options* o, int32_t divisor) {
  return set("ellipsa_fit_options_set_divisor", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_CLASSICAL}, "the divisor");
    if (divisor != ELLIPSA_DIVISOR_N && divisor != ELLIPSA_DIVISOR_N_MINUS_1)
      bad("divisor must be ELLIPSA_DIVISOR_N or ELLIPSA_DIVISOR_N_MINUS_1");
    x.divisor = divisor;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_missing(ellipsa_fit_options* o, int32_t policy) {
  return set("ellipsa_fit_options_set_missing", o, [&](ellipsa_fit_options& x) {
    if (policy != ELLIPSA_MISSING_DROP_ROWS && policy != ELLIPSA_MISSING_REFUSE && policy != ELLIPSA_MISSING_EM)
      bad("unknown missing-value policy");
    if (policy == ELLIPSA_MISSING_EM && x.method != ELLIPSA_METHOD_MIXTURE)
      bad("ELLIPSA_MISSING_EM applies to mixtures only");
    x.missing = policy;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_column_names(ellipsa_fit_options* o, const char* const* names,
                                                                int64_t count) {
  return set("ellipsa_fit_options_set_column_names", o, [&](ellipsa_fit_options& x) {
    require_not_null(names, "names");
    if (count < 1) bad("count must be at least 1");
    std::vector<std::string> copy;
    copy.reserve(static_cast<size_t>(count));
    for (int64_t j = 0; j < count; ++j) {
      if (names[j] == nullptr) throw Misuse{ELLIPSA_ERR_NULL, "names[" + std::to_string(j) + "] is NULL"};
      copy.emplace_back(names[j]);
    }
    x.column_names = std::move(copy);
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_alpha(ellipsa_fit_options* o, double alpha) {
  return set("ellipsa_fit_options_set_alpha", o, [&](ellipsa_fit_options& x) {
    require_method(x, kMcdFamily, "alpha");
    if (!(alpha >= 0.5 && alpha <= 1.0)) bad("alpha must lie in [0.5, 1]");
    x.alpha = alpha;
    x.alpha_set = true;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_small_sample(ellipsa_fit_options* o, int32_t on) {
  return set("ellipsa_fit_options_set_small_sample", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD}, "the small-sample factors");
    if (on != 0 && on != 1) bad("on must be 0 or 1");
    x.small_sample = on;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_consistency(ellipsa_fit_options* o, int32_t rule) {
  return set("ellipsa_fit_options_set_consistency", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD}, "the consistency rule");
    if (rule != ELLIPSA_CONSISTENCY_NORMAL && rule != ELLIPSA_CONSISTENCY_MEDIAN)
      bad("rule must be ELLIPSA_CONSISTENCY_NORMAL or ELLIPSA_CONSISTENCY_MEDIAN");
    x.consistency = rule;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_reference(ellipsa_fit_options* o, int32_t reference) {
  return set("ellipsa_fit_options_set_reference", o, [&](ellipsa_fit_options& x) {
    require_method(x,
                   {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS, ELLIPSA_METHOD_MCD,
                    ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MRCD},
                   "a scoring reference");
    if (reference != ELLIPSA_REFERENCE_CHI2 && reference != ELLIPSA_REFERENCE_NEW_ROWS &&
        reference != ELLIPSA_REFERENCE_FITTING_ROWS)
      bad("reference must be ELLIPSA_REFERENCE_CHI2, _NEW_ROWS or _FITTING_ROWS");
    x.reference = reference;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_seed(ellipsa_fit_options* o, uint64_t seed) {
  return set("ellipsa_fit_options_set_seed", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_MIXTURE}, "a seed");
    x.seed = seed;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_components(ellipsa_fit_options* o, int32_t k_min, int32_t k_max) {
  return set("ellipsa_fit_options_set_components", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MIXTURE}, "components");
    if (k_min < 1 || k_max < k_min) bad("components need 1 <= k_min <= k_max");
    if (k_max > 100) bad("k_max above 100 is not supported");
    x.k_min = k_min;
    x.k_max = k_max;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_structure(ellipsa_fit_options* o, int32_t structure) {
  return set("ellipsa_fit_options_set_structure", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MIXTURE}, "the covariance structure");
    if (structure < ELLIPSA_STRUCTURE_FULL || structure > ELLIPSA_STRUCTURE_ALL) bad("unknown covariance structure");
    x.structure = structure;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_restarts(ellipsa_fit_options* o, int32_t restarts) {
  return set("ellipsa_fit_options_set_restarts", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MIXTURE}, "restarts");
    if (restarts < 1 || restarts > 10000) bad("restarts must lie in [1, 10000]");
    x.restarts = restarts;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_starts(ellipsa_fit_options* o, int32_t starts) {
  return set("ellipsa_fit_options_set_starts", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MCD}, "the number of random starts");
    if (starts < 1 || starts > 100000) bad("starts must lie in [1, 100000]");
    x.starts = starts;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_iterations(ellipsa_fit_options* o, int32_t max_iterations,
                                                              double tolerance) {
  return set("ellipsa_fit_options_set_iterations", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MIXTURE}, "the iteration limits");
    if (max_iterations < 1) bad("max_iterations must be at least 1");
    if (!(tolerance > 0.0 && std::isfinite(tolerance))) bad("tolerance must be finite and positive");
    x.max_iterations = max_iterations;
    x.tolerance = tolerance;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_regularisation(ellipsa_fit_options* o, double relative) {
  return set("ellipsa_fit_options_set_regularisation", o, [&](ellipsa_fit_options& x) {
    require_method(x, {ELLIPSA_METHOD_MIXTURE}, "the regularisation");
    if (!(relative >= 0.0 && std::isfinite(relative))) bad("regularisation must be finite and >= 0");
    x.regularisation = relative;
  });
}

ELLIPSA_API ellipsa_status ellipsa_fit_options_set_progress(ellipsa_fit_options* o, ellipsa_progress_fn callback,
                                                            void* user) {
  return set("ellipsa_fit_options_set_progress", o, [&](ellipsa_fit_options& x) {
    x.progress = callback;
    x.progress_user = user;
  });
}

}  // extern "C"
