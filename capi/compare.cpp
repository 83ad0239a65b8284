// ellipsa_batch_compare and the queries of its result handle. The tests are
// the core's (core/batch_compare); this file checks arguments, owns the
// handle and turns a test that could not be computed into its status.
#include <cmath>
#include <limits>
#include <string>

#include "boundary.hpp"
#include "cell_names.hpp"
#include "core/batch_compare.hpp"
#include "core/error.hpp"
#include "matrix_view.hpp"
#include "result_struct.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace core = ellipsa::core;

struct ellipsa_comparison {
  core::BatchComparison result;
};

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

core::CompareOptions core_options(const ellipsa_compare_options* given) {
  core::CompareOptions o;
  if (given == nullptr) return o;
  if (given->struct_size < static_cast<int64_t>(sizeof(ellipsa_compare_options)))
    throw Misuse{ELLIPSA_ERR_SHAPE,
                 "ellipsa_compare_options.struct_size too small: initialise with ELLIPSA_COMPARE_OPTIONS_INIT"};
  if (given->robust != 0 && given->robust != 1) throw Misuse{ELLIPSA_ERR_ARGUMENT, "robust must be 0 or 1"};
  o.robust = given->robust == 1;
  o.permutations = given->permutations;  // range checked by the core
  o.seed = given->seed;
  o.alpha = given->alpha;
  if (given->progress != nullptr) {
    ellipsa_progress_fn fn = given->progress;
    void* user = given->progress_user;
    o.progress = [fn, user](const char* stage, double fraction) { return fn(stage, fraction, user) == 0; };
  }
  return o;
}

// The value of a test, or its reason rethrown as the status a caller sees.
template <class T>
const T& value_or_reason(const core::Outcome<T>& o) {
  if (!o.value) {
    if (o.kind == core::ErrorKind::Argument) throw Misuse{ELLIPSA_ERR_STATE, o.reason};
    throw core::Error(o.kind, o.reason);
  }
  return *o.value;
}

ellipsa_test_result test_result(const core::BatchComparison& c, int32_t which) {
  ellipsa_test_result r{};
  r.df2 = kNaN;
  switch (which) {
    case ELLIPSA_TEST_MEAN_SHIFT: {
      const auto& t = value_or_reason(c.mean_shift);
      r.statistic = t.t2;
      r.transformed = t.f;
      r.df1 = t.df1;
      r.df2 = t.df2;
      r.p_value = t.p_value;
      r.law = ELLIPSA_LAW_F;
      r.approximate = 0;
      return r;
    }
    case ELLIPSA_TEST_ROBUST_MEAN_SHIFT: {
      const auto& t = value_or_reason(c.robust_mean_shift);
      const double n1 = t.reference.n, n2 = t.batch.n, p = static_cast<double>(t.reference.mean.size());
      r.statistic = t.t2;
      r.transformed = (n1 + n2 - p - 1.0) / (p * (n1 + n2 - 2.0)) * t.t2;
      r.df1 = p;
      r.p_value = t.p_value;
      r.law = ELLIPSA_LAW_PERMUTATION;
      r.approximate = 1;
      r.permutations_used = t.permutations_used;
      r.permutations_failed = t.permutations_failed;
      return r;
    }
    case ELLIPSA_TEST_COVARIANCE_CHANGE: {
      const auto& t = value_or_reason(c.covariance_change);
      r.statistic = t.m;
      r.transformed = t.chi2;
      r.df1 = t.df;
      r.p_value = t.p_value;
      r.law = ELLIPSA_LAW_CHI2;
      r.approximate = 1;
      return r;
    }
    default: throw Misuse{ELLIPSA_ERR_ARGUMENT, "unknown test " + std::to_string(which)};
  }
}

}  // namespace

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_batch_compare(ellipsa_comparison** out, const ellipsa_matrix* reference,
                                                 const ellipsa_matrix* batch, const ellipsa_compare_options* options) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_batch_compare", [&] {
    require_not_null(out, "out");
    const core::DataView r = ellipsa::capi::checked_view(reference, "reference");
    const core::DataView b = ellipsa::capi::checked_view(batch, "batch");
    const core::CompareOptions o = core_options(options);
    // A located problem names its matrix in the context (core/batch_compare.cpp).
    auto* c = new ellipsa_comparison{[&] {
      try {
        return core::compare_batches(r, b, o);
      } catch (const core::LocatedError& e) {
        throw core::Error(e.kind(), ellipsa::capi::located_text(e, e.context().c_str(),
                                                                ellipsa::capi::default_column_names(r.cols())));
      }
    }()};
    *out = c;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API void ellipsa_comparison_destroy(ellipsa_comparison* comparison) { delete comparison; }

ELLIPSA_API ellipsa_status ellipsa_comparison_test(ellipsa_test_result* out, const ellipsa_comparison* comparison,
                                                   int32_t which) {
  return guard("ellipsa_comparison_test", [&] {
    require_not_null(out, "out");
    require_not_null(comparison, "comparison");
    ellipsa::capi::write_sized(out, test_result(comparison->result, which),
                               static_cast<int64_t>(sizeof(ellipsa_test_result)), "ellipsa_test_result");
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_comparison_variables(ellipsa_variable_shift* out, int64_t capacity, int64_t* count,
                                                        const ellipsa_comparison* comparison) {
  return guard("ellipsa_comparison_variables", [&] {
    require_not_null(count, "count");
    require_not_null(comparison, "comparison");
    const auto& v = comparison->result.variables;
    *count = static_cast<int64_t>(v.size());
    if (out == nullptr) return ELLIPSA_OK;
    if (capacity < *count)
      throw Misuse{ELLIPSA_ERR_SHAPE,
                   "capacity " + std::to_string(capacity) + " is below the " + std::to_string(*count) + " variables"};
    for (std::size_t j = 0; j < v.size(); ++j) {
      ellipsa_variable_shift s{};
      s.reference_mean = v[j].reference_mean;
      s.reference_sd = v[j].reference_sd;
      s.batch_mean = v[j].batch_mean;
      s.batch_sd = v[j].batch_sd;
      s.shift_in_sd = v[j].shift_in_sd;
      s.t = v[j].welch.t;
      s.df = v[j].welch.df;
      s.p_value = v[j].welch.p_value;
      s.p_holm = v[j].p_holm;
      ellipsa::capi::write_sized(&out[j], s, static_cast<int64_t>(sizeof(ellipsa_variable_shift)),
                                 "ellipsa_variable_shift");
    }
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_comparison_rows(int64_t* reference_used, int64_t* reference_dropped,
                                                   int64_t* batch_used, int64_t* batch_dropped,
                                                   const ellipsa_comparison* comparison) {
  return guard("ellipsa_comparison_rows", [&] {
    require_not_null(comparison, "comparison");
    const auto& c = comparison->result;
    if (reference_used) *reference_used = c.reference_rows;
    if (reference_dropped) *reference_dropped = c.reference_dropped;
    if (batch_used) *batch_used = c.batch_rows;
    if (batch_dropped) *batch_dropped = c.batch_dropped;
    return ELLIPSA_OK;
  });
}

}  // extern "C"
