// libFuzzer target for the model-file loader (ellipsa_model_load).
//
// The input is the file. Beyond "no crash, no sanitizer report, a status":
//  1. A failed load leaves *out NULL and gives a message naming the function.
//  2. A model that loads has finite locations, symmetric positive-definite
//     scatters and weights in (0, 1] (the loader promises to check them).
//  3. It saves, and load(save(m)) saves to the same bytes.
//  4. Scoring the same rows twice against the loaded model gives identical
//     bits, and finite distances on finite rows.
// Dictionary: model_format.dict (the format's keys and words).
#include <cmath>
#include <cstdint>
#include <cstring>
#include <string>
#include <vector>

#include "fuzz_support.hpp"

namespace {

void check_scores(const ellipsa_model* m) {
  std::int32_t kind = 0, components = 0;
  ellipsa_method method = 0;
  std::int64_t p = 0;
  fuzz::check(ellipsa_model_describe(&kind, &method, &p, &components, m) == ELLIPSA_OK, "describe");
  if (p > 64 || components > 64) return;
  const std::int64_t n = 3;
  std::vector<double> rows(static_cast<std::size_t>(n * p));
  for (std::size_t i = 0; i < rows.size(); ++i) rows[i] = static_cast<double>(i % 7) - 3.0;
  const ellipsa_matrix view = ellipsa_matrix_row_major(rows.data(), n, p);
  std::vector<double> d1(n), d2(n), pv(n), ld1(n), ld2(n);
  ellipsa_scores s1 = ELLIPSA_SCORES_INIT, s2 = ELLIPSA_SCORES_INIT;
  s1.squared_distance = d1.data();
  s1.p_value = pv.data();
  s1.log_density = ld1.data();
  s2.squared_distance = d2.data();
  s2.log_density = ld2.data();
  const ellipsa_status a = ellipsa_model_score(&s1, m, &view, 0.975);
  const ellipsa_status b = ellipsa_model_score(&s2, m, &view, 0.975);
  fuzz::check(a == b, "scoring twice gives different statuses");
  if (a != ELLIPSA_OK) return;
  fuzz::check(std::memcmp(d1.data(), d2.data(), n * sizeof(double)) == 0, "scoring twice differs");
  fuzz::check(std::memcmp(ld1.data(), ld2.data(), n * sizeof(double)) == 0, "log-density twice differs");
  for (std::int64_t i = 0; i < n; ++i) {
    fuzz::check(!std::isnan(d1[i]) && d1[i] >= 0, "distance of a finite row is NaN or negative");
    fuzz::check(pv[i] >= 0 && pv[i] <= 1, "p-value outside [0, 1]");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  ellipsa_model* m = reinterpret_cast<ellipsa_model*>(&size);  // must be overwritten
  const ellipsa_status st =
      ellipsa_model_load(&m, reinterpret_cast<const char*>(data), static_cast<std::int64_t>(size));
  if (st != ELLIPSA_OK) {
    fuzz::check(m == nullptr, "failed load leaves *out set");
    fuzz::check(std::strncmp(ellipsa_last_error(), "ellipsa_model_load", 18) == 0, "message names the function",
                ellipsa_last_error());
    fuzz::check(st == ELLIPSA_ERR_FORMAT || st == ELLIPSA_ERR_ARGUMENT || st == ELLIPSA_ERR_MEMORY, "load status",
                ellipsa_status_string(st));
    return 0;
  }
  fuzz::check(m != nullptr, "loaded model is NULL");
  fuzz::check_model(m);
  fuzz::check_round_trip(m);
  check_scores(m);
  ellipsa_model_destroy(m);
  return 0;
}
