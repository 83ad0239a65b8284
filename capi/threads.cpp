// Thread counts: the setter of the fit options and the default of every call.
#include "threads.hpp"

#include <sched.h>

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <string>
#include <thread>

#include "boundary.hpp"
#include "core/parallel.hpp"
#include "options.hpp"

namespace ellipsa::capi {
namespace {

int available_cores() {
  cpu_set_t set;
  CPU_ZERO(&set);
  if (sched_getaffinity(0, sizeof(set), &set) == 0) {
    const int n = CPU_COUNT(&set);
    if (n > 0) return n;
  }
  const unsigned h = std::thread::hardware_concurrency();
  return h > 0 ? static_cast<int>(h) : 1;
}

}  // namespace

int resolve_threads(int32_t requested) {
  if (requested < 0)
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "thread count must be >= 0 (0 = ELLIPSA_THREADS or the available cores)"};
  if (requested > 0) return requested > core::kMaxThreads ? core::kMaxThreads : static_cast<int>(requested);
  // Read at each call (not cached): no library state to initialise.
  const char* env = std::getenv("ELLIPSA_THREADS");
  if (env == nullptr || *env == '\0') return std::min(available_cores(), core::kMaxThreads);
  char* end = nullptr;
  errno = 0;
  const long v = std::strtol(env, &end, 10);
  if (errno != 0 || end == env || *end != '\0' || v < 1 || v > core::kMaxThreads)
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "environment variable ELLIPSA_THREADS is \"" + std::string(env) +
                                           "\"; it must be a whole number from 1 to 256, or unset"};
  return static_cast<int>(v);
}

}  // namespace ellipsa::capi

extern "C" ELLIPSA_API ellipsa_status ellipsa_fit_options_set_threads(ellipsa_fit_options* options, int32_t threads) {
  using namespace ellipsa::capi;
  return guard("ellipsa_fit_options_set_threads", [&] {
    require_not_null(options, "options");
    if (threads < 0 || threads > ellipsa::core::kMaxThreads)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "threads must lie in [0, 256] (0 = ELLIPSA_THREADS or the available cores)"};
    options->threads = threads;
    return ELLIPSA_OK;
  });
}

extern "C" ELLIPSA_API ellipsa_status ellipsa_threads_resolve(int32_t* threads, int32_t requested) {
  using namespace ellipsa::capi;
  return guard("ellipsa_threads_resolve", [&] {
    require_not_null(threads, "threads");
    if (requested < 0 || requested > ellipsa::core::kMaxThreads)
      throw Misuse{ELLIPSA_ERR_ARGUMENT,
                   "requested threads must lie in [0, 256] (0 = ELLIPSA_THREADS or the available cores)"};
    *threads = static_cast<int32_t>(resolve_threads(requested));
    return ELLIPSA_OK;
  });
}
