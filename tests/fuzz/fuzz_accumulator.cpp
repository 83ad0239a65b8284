// libFuzzer target for the streaming accumulator: add / merge / model on
// fuzzed chunks.
//
// Input: method (classical, ledoit-wolf, oas), divisor, p, then chunks (rows,
// a target accumulator among three, values). Oracles:
//  1. Statuses are the header's; add with an infinite value adds nothing (the
//     row counts do not move); counts of added and skipped rows are exact.
//  2. Merging the three accumulators gives the counts of one accumulator that
//     saw every chunk, and (when a model can be made from both) locations equal
//     to within 1e-9 of the data's largest magnitude (means merge exactly in
//     exact arithmetic: Chan, Golub & LeVeque 1979).
//  3. A model that is made has finite locations and symmetric positive-
//     definite scatters, saves and reloads to the same bytes, and making it
//     twice gives the same bytes.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "fuzz_support.hpp"

namespace {

struct Acc {
  ellipsa_accumulator* a = nullptr;
  ~Acc() { ellipsa_accumulator_destroy(a); }
};

void counts(const ellipsa_accumulator* a, std::int64_t* added, std::int64_t* skipped) {
  fuzz::check(ellipsa_accumulator_rows(added, skipped, a) == ELLIPSA_OK, "rows");
}

// The model's file and location, or the status when none can be made.
struct Made {
  ellipsa_status status = 0;
  std::string file;
  std::vector<double> location;
};

Made make(const ellipsa_accumulator* a, const ellipsa_fit_options* o, std::int64_t p) {
  Made out;
  ellipsa_model* m = nullptr;
  out.status = ellipsa_model_from_accumulator(&m, a, o);
  fuzz::check(out.status == ELLIPSA_OK || out.status == ELLIPSA_ERR_DATA || out.status == ELLIPSA_NUM_SINGULAR ||
                  out.status == ELLIPSA_ERR_ARGUMENT || out.status == ELLIPSA_ERR_SHAPE,
              "from_accumulator status", ellipsa_last_error());
  if (out.status != ELLIPSA_OK) {
    fuzz::check(m == nullptr, "failed model leaves *out set");
    return out;
  }
  fuzz::check_model(m);
  out.file = fuzz::check_round_trip(m);
  out.location.resize(static_cast<std::size_t>(p));
  double w = 0;
  fuzz::check(ellipsa_model_component(out.location.data(), p, nullptr, 0, &w, m, 0) == ELLIPSA_OK, "location",
              ellipsa_last_error());
  ellipsa_model* again = nullptr;
  fuzz::check(ellipsa_model_from_accumulator(&again, a, o) == ELLIPSA_OK, "second model");
  fuzz::check(fuzz::save(again) == out.file, "making the model twice differs");
  ellipsa_model_destroy(again);
  ellipsa_model_destroy(m);
  return out;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::Input in(data, size);
  const auto method = static_cast<ellipsa_method>(in.range(1, 3));
  const std::int32_t divisor = static_cast<std::int32_t>(in.range(1, 2));
  const std::int64_t p = in.range(0, 5);

  Acc whole, part[3];
  const ellipsa_status created = ellipsa_accumulator_create(&whole.a, p);
  if (p < 1) {
    fuzz::check(created == ELLIPSA_ERR_ARGUMENT && whole.a == nullptr, "p < 1 refused");
    return 0;
  }
  fuzz::check(created == ELLIPSA_OK, "create");
  for (Acc& a : part) fuzz::check(ellipsa_accumulator_create(&a.a, p) == ELLIPSA_OK, "create part");

  std::int64_t expect_added = 0, expect_skipped = 0;
  double largest = 0;
  for (int chunk = 0; chunk < 12 && !in.empty(); ++chunk) {
    const std::int64_t rows = in.range(0, 9);
    const int target = in.byte() % 3;
    const bool wrong_width = in.byte() == 255;
    const std::int64_t cols = wrong_width ? p + 1 : p;
    std::vector<double> v(static_cast<std::size_t>(rows * cols));
    for (double& x : v) x = in.value();
    const ellipsa_matrix view = ellipsa_matrix_row_major(v.data(), rows, cols);

    bool any_inf = false;
    std::int64_t nan_rows = 0;
    for (std::int64_t i = 0; i < rows; ++i) {
      bool nan = false;
      for (std::int64_t j = 0; j < cols; ++j) {
        const double x = v[i * cols + j];
        if (std::isinf(x)) any_inf = true;
        if (std::isnan(x)) nan = true;
      }
      nan_rows += nan;
    }
    std::int64_t before_added = 0, before_skipped = 0;
    counts(whole.a, &before_added, &before_skipped);
    const ellipsa_status a = ellipsa_accumulator_add(whole.a, &view);
    const ellipsa_status b = ellipsa_accumulator_add(part[target].a, &view);
    fuzz::check(a == b, "same chunk, different status");
    std::int64_t added = 0, skipped = 0;
    counts(whole.a, &added, &skipped);
    if (wrong_width) {
      fuzz::check(a == ELLIPSA_ERR_SHAPE, "column count not refused");
    } else if (any_inf) {
      fuzz::check(a == ELLIPSA_ERR_DATA, "infinite value not refused");
    } else {
      fuzz::check(a == ELLIPSA_OK, "add refused", ellipsa_last_error());
      expect_added += rows - nan_rows;
      expect_skipped += nan_rows;
      for (std::int64_t i = 0; i < rows; ++i) {
        bool nan = false;
        for (std::int64_t j = 0; j < cols; ++j) nan |= std::isnan(v[i * cols + j]);
        if (!nan)
          for (std::int64_t j = 0; j < cols; ++j) largest = std::max(largest, std::fabs(v[i * cols + j]));
      }
    }
    if (a != ELLIPSA_OK) fuzz::check(added == before_added && skipped == before_skipped, "refused add changed counts");
    fuzz::check(added == expect_added && skipped == expect_skipped, "row counts");
  }

  fuzz::check(ellipsa_accumulator_merge(part[0].a, part[0].a) == ELLIPSA_ERR_ARGUMENT, "self-merge refused");
  for (int i = 1; i < 3; ++i) {
    const ellipsa_status merged = ellipsa_accumulator_merge(part[0].a, part[i].a);
    fuzz::check(merged == ELLIPSA_OK, "merge", std::string(ellipsa_status_string(merged)) + " " + ellipsa_last_error());
  }
  std::int64_t added = 0, skipped = 0;
  counts(part[0].a, &added, &skipped);
  fuzz::check(added == expect_added && skipped == expect_skipped, "merged row counts");

  ellipsa_fit_options* options = nullptr;
  fuzz::check(ellipsa_fit_options_create(&options, method) == ELLIPSA_OK, "options");
  if (method == ELLIPSA_METHOD_CLASSICAL) ellipsa_fit_options_set_divisor(options, divisor);
  const Made w = make(whole.a, options, p);
  const Made m = make(part[0].a, options, p);
  ellipsa_fit_options_destroy(options);
  if (w.status == ELLIPSA_OK && m.status == ELLIPSA_OK && std::isfinite(largest))
    for (std::int64_t j = 0; j < p; ++j)
      fuzz::check(std::fabs(w.location[j] - m.location[j]) <= 1e-9 * largest, "merged mean differs",
                  std::to_string(w.location[j]) + " " + std::to_string(m.location[j]));
  return 0;
}
