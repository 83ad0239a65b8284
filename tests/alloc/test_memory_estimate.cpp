// The working-memory estimate of ellipsa_model_fit (ellipsa_fit_memory_estimate,
// the basis of the memory ceiling) against the measured peak of live bytes
// the fit allocates (failing_alloc::track_bytes: every malloc and operator new
// of the calling thread, one fitting thread). For each method and a few
// shapes (tall, wide, with missing values for the mixture's EM) the estimate
// must be at least the peak; the ratio is printed, so that an estimate grown
// far too loose shows too. A fit refused by the ceiling must allocate next to
// nothing (under kRefusedBytes) before it returns.
//
// Data are invented: a fixed recurrence, no file. OpenBLAS runs one thread
// (the test's environment) so that its buffers are not counted here or there.
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <string>
#include <vector>

#include "ellipsa.h"
#include "failing_alloc.hpp"

namespace {

// Bytes a refused fit may allocate (the message and the exception object).
constexpr std::int64_t kRefusedBytes = 64 * 1024;

int g_failures = 0;

std::vector<double> data(std::int64_t n, std::int64_t p, bool holes) {
  std::vector<double> x(static_cast<std::size_t>(n * p));
  std::uint64_t s = 2026;
  for (std::size_t i = 0; i < x.size(); ++i) {
    s = s * 6364136223846793005ULL + 1442695040888963407ULL;
    x[i] =
        static_cast<double>(s >> 11) / 9007199254740992.0 + 0.1 * static_cast<double>(i % static_cast<std::size_t>(p));
    if (holes && i % 37 == 5) x[i] = std::nan("");
  }
  return x;
}

void measure(ellipsa_method method, std::int64_t n, std::int64_t p, bool em) {
  ellipsa_fit_options* o = nullptr;
  ellipsa_fit_options_create(&o, method);
  ellipsa_fit_options_set_threads(o, 1);
  if (method == ELLIPSA_METHOD_MIXTURE) {
    ellipsa_fit_options_set_components(o, 1, 3);
    ellipsa_fit_options_set_restarts(o, 2);
    if (em) ellipsa_fit_options_set_missing(o, ELLIPSA_MISSING_EM);
  }
  std::int64_t estimate = 0;
  ellipsa_fit_memory_estimate(&estimate, o, n, p);
  const auto x = data(n, p, em);
  const ellipsa_matrix view = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* m = nullptr;
  failing_alloc::track_bytes();
  const ellipsa_status st = ellipsa_model_fit(&m, &view, o);
  const std::int64_t peak = failing_alloc::peak_bytes();
  const std::string what = std::string(ellipsa_method_name(method)) + (em ? " (EM)" : "") + " n=" + std::to_string(n) +
                           " p=" + std::to_string(p);
  std::printf("%-28s status %-22s peak %11lld estimate %11lld ratio %.2f\n", what.c_str(), ellipsa_status_string(st),
              static_cast<long long>(peak), static_cast<long long>(estimate),
              static_cast<double>(estimate) / static_cast<double>(peak));
  if (st != ELLIPSA_OK) {
    std::fprintf(stderr, "FAIL %s: %s\n", what.c_str(), ellipsa_last_error());
    ++g_failures;
  } else if (peak > estimate) {
    std::fprintf(stderr, "FAIL %s: peak %lld above the estimate %lld\n", what.c_str(), static_cast<long long>(peak),
                 static_cast<long long>(estimate));
    ++g_failures;
  }
  ellipsa_model_destroy(m);
  // The same fit under a ceiling just below its estimate is refused at once.
  ellipsa_fit_options_set_memory_limit(o, estimate - 1);
  failing_alloc::track_bytes();
  const ellipsa_status refused = ellipsa_model_fit(&m, &view, o);
  const std::int64_t refused_peak = failing_alloc::peak_bytes();
  if (refused != ELLIPSA_ERR_MEMORY || refused_peak > kRefusedBytes) {
    std::fprintf(stderr, "FAIL %s: under the ceiling status %s, %lld bytes allocated\n", what.c_str(),
                 ellipsa_status_string(refused), static_cast<long long>(refused_peak));
    ++g_failures;
  }
  ellipsa_fit_options_destroy(o);
}

}  // namespace

int main() {
  const ellipsa_method all[] = {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS,
                                ELLIPSA_METHOD_MCD,       ELLIPSA_METHOD_DETMCD,      ELLIPSA_METHOD_MIXTURE};
  for (ellipsa_method method : all) {
    measure(method, 5000, 6, false);  // tall (FAST-MCD: nested scheme)
    measure(method, 400, method == ELLIPSA_METHOD_MIXTURE ? 12 : 30,
            false);                 // wider (a mixture needs rows > parameters)
    measure(method, 60, 3, false);  // small: the fixed overhead dominates
  }
  measure(ELLIPSA_METHOD_MIXTURE, 3000, 5, true);
  measure(ELLIPSA_METHOD_MRCD, 40, 120, false);  // MRCD is for n <= p
  measure(ELLIPSA_METHOD_MRCD, 200, 20, false);
  if (g_failures) std::fprintf(stderr, "%d failures\n", g_failures);
  return g_failures ? 1 : 0;
}
