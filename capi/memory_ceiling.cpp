// Working-memory estimates of the fit methods and the memory ceiling.
//
// The estimates are upper bounds of the bytes a fit allocates beyond the
// caller's data, made from n, p, K and the options only, before anything is
// allocated. Each term names the buffers it stands for; the constant factors
// were checked against the measured peak of each method
// (tests/alloc/test_memory_estimate.cpp) and carry a margin, so that a fit
// within its ceiling is not refused for a few bytes. The formulas are also in
// ellipsa.h (ellipsa_fit_memory_estimate), the contract.
#include "memory_ceiling.hpp"

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <limits>
#include <string>

#include "boundary.hpp"
#include "core/mcd_fast.hpp"
#include "threads.hpp"

namespace ellipsa::capi {
namespace {

constexpr int64_t kOverflow = std::numeric_limits<int64_t>::max();
// Bytes of a double and of an index (core::Index is std::ptrdiff_t).
constexpr int64_t kWord = 8;
// Fixed overhead of any fit (model, names, messages, small vectors), bytes.
constexpr int64_t kFixedBytes = 1 << 20;
// Rows per chunk of the moment accumulation (core/moments.cpp, core/shrinkage.cpp).
constexpr int64_t kChunkRows = 4096;
// FAST-MCD: candidates held at once (4 * best_kept, core/mcd_fast.cpp) and the
// rows pooled by the nested scheme (max_groups * group_size).
constexpr int64_t kMcdCandidates = 40;
constexpr int64_t kMcdPooledRows = 1500;

// Checked int64 arithmetic: any overflow makes the whole estimate kOverflow.
struct Checked {
  int64_t v = 0;
  bool overflow = false;
};
Checked mul(Checked a, int64_t b) {
  if (a.overflow) return a;
  Checked r;
  r.overflow = __builtin_mul_overflow(a.v, b, &r.v);
  return r;
}
Checked add(Checked a, Checked b) {
  Checked r;
  r.overflow = a.overflow || b.overflow || __builtin_add_overflow(a.v, b.v, &r.v);
  return r;
}
Checked val(int64_t v) { return Checked{v, false}; }
Checked prod(std::initializer_list<int64_t> f) {
  Checked r = val(1);
  for (int64_t x : f) r = mul(r, x);
  return r;
}

}  // namespace

int64_t fit_memory_estimate(const ellipsa_fit_options& o, int64_t n, int64_t p) {
  const int64_t threads = resolve_threads(o.threads);
  const int64_t chunk = std::min(n, kChunkRows);
  const int64_t chunks = (n + kChunkRows - 1) / kChunkRows;
  // Every fit: the copy of the complete rows, the kept/dropped row lists, and
  // the model (location, scatter, its factor, raw scatter, small vectors).
  Checked words = add(prod({n, p}), add(prod({3, n}), prod({6, p, p})));
  switch (o.method) {
    case ELLIPSA_METHOD_CLASSICAL:
    case ELLIPSA_METHOD_LEDOIT_WOLF:
    case ELLIPSA_METHOD_OAS:
      // Per thread two chunk copies and a Gram matrix; one p x p per chunk
      // merged in order; covariance, targets and temporaries (8 p^2).
      words = add(words, mul(add(prod({2, chunk, p}), prod({p, p})), threads));
      words = add(words, mul(add(prod({p, p}), val(2 * p)), chunks));
      words = add(words, prod({8, p, p}));
      break;
    case ELLIPSA_METHOD_MCD:
      // Standardised copy, the C-step workspace (distances, order, centred
      // rows: 2 n p), group and pool gathers, every candidate's h rows and
      // p x p fit, and the final reweighting (n p + 4 n).
      words = add(words, prod({4, n, p}));
      words = add(words, prod({2, std::min(n, kMcdPooledRows), p}));
      words = add(words, mul(add(val(n), prod({2, p, p})), kMcdCandidates));
      words = add(words, prod({12, n}));
      // On more than one thread: each worker's C-step scratch (distances,
      // selection copy, row lists: 5 n, and a block of 1024 rows), and the
      // finished starts of a round (core::kFastMcdRoundBytes, at least one
      // start of 3 p^2 + n words per thread).
      if (threads > 1) {
        words = add(words, mul(add(prod({5, n}), prod({std::min<int64_t>(n, 1024), p})), threads));
        words = add(words, val(static_cast<int64_t>(core::kFastMcdRoundBytes / sizeof(double))));
        words = add(words, mul(add(prod({3, p, p}), val(n)), threads));
      }
      break;
    case ELLIPSA_METHOD_DETMCD:
      // Standardised copy, six starting estimators (each up to 2 n p and
      // 3 p^2: ranks, normal scores, spatial signs, ...), C-steps as above.
      words = add(words, prod({15, n, p}));
      words = add(words, prod({30, p, p}));
      words = add(words, prod({20, n}));
      // The six chains' distances (6 n), and on more than one thread each
      // further thread's start scratch, robust-scale and rank buffers and
      // C-step scratch (n p + 14 n) and
      // everyone's block of whitened rows for the six chains (1024 x 6 p).
      words = add(words, prod({6, n}));
      if (threads > 1) {
        const int64_t workers = std::min<int64_t>(threads, 6);
        words = add(words, mul(add(prod({n, p}), prod({14, n})), workers - 1));
        words = add(words, mul(prod({std::min<int64_t>(n, 1024), 6, p}), threads));
      }
      break;
    case ELLIPSA_METHOD_MRCD:
      // Standardised copy, the target and its eigen-decomposition, the
      // regularised scatter and its inverse per start (p^2 each), C-steps.
      words = add(words, prod({6, n, p}));
      words = add(words, prod({20, p, p}));
      words = add(words, prod({20, n}));
      break;
    case ELLIPSA_METHOD_MIXTURE:
    default: {
      // Per candidate K (the largest dominates; the best start is kept
      // besides the running one): responsibilities, each run's buffer for
      // the responsibilities of an acceleration jump, posteriors and
      // log-densities (8 n K), means, covariances and their factors
      // (8 K p^2 + 4 K p), the data copy and k-means++ seeding (2 n p).
      // EM over missing values adds the imputed copy and the pattern lists
      // (2 n p + n) and the conditional pieces of each component (4 K p^2).
      const int64_t k = std::max<int64_t>(1, o.k_max);
      words = add(words, prod({2, n, p}));
      words = add(words, prod({8, n, k}));
      words = add(words, prod({8, k, p, p}));
      words = add(words, prod({4, k, p}));
      words = add(words, prod({10, n}));
      if (o.missing == ELLIPSA_MISSING_EM) words = add(words, add(add(prod({2, n, p}), val(n)), prod({4, k, p, p})));
      break;
    }
  }
  const Checked bytes = add(mul(words, kWord), val(kFixedBytes));
  return bytes.overflow ? kOverflow : bytes.v;
}

int64_t memory_ceiling(const ellipsa_fit_options& o) {
  if (o.memory_limit > 0) return o.memory_limit;
  // Read at each call (not cached), as ELLIPSA_THREADS is.
  const char* env = std::getenv("ELLIPSA_MEMORY_LIMIT");
  if (env == nullptr || *env == '\0') return 0;
  char* end = nullptr;
  errno = 0;
  const long long v = std::strtoll(env, &end, 10);
  int64_t scale = 1;
  if (end != env && *end != '\0' && end[1] == '\0') {
    switch (*end) {
      case 'K':
        scale = int64_t{1} << 10;
        ++end;
        break;
      case 'M':
        scale = int64_t{1} << 20;
        ++end;
        break;
      case 'G':
        scale = int64_t{1} << 30;
        ++end;
        break;
      default: break;
    }
  }
  int64_t bytes = 0;
  if (errno != 0 || end == env || *end != '\0' || v < 0 ||
      __builtin_mul_overflow(static_cast<int64_t>(v), scale, &bytes))
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "environment variable ELLIPSA_MEMORY_LIMIT is \"" + std::string(env) +
                                           "\"; it must be a whole number of bytes >= 0, optionally followed by K, M "
                                           "or G (binary multiples), or unset"};
  return bytes;
}

void require_within_ceiling(const ellipsa_fit_options& o, int64_t n, int64_t p) {
  const int64_t ceiling = memory_ceiling(o);
  const int64_t estimate = fit_memory_estimate(o, n, p);
  if (estimate == kOverflow)
    throw Misuse{ELLIPSA_ERR_MEMORY, "the working memory of a fit of " + std::to_string(n) + " rows and " +
                                         std::to_string(p) + " columns overflows a 64-bit size"};
  if (ceiling > 0 && estimate > ceiling)
    throw Misuse{ELLIPSA_ERR_MEMORY,
                 "a fit of " + std::to_string(n) + " rows and " + std::to_string(p) + " columns needs an estimated " +
                     std::to_string(estimate) + " bytes of working memory, above the ceiling of " +
                     std::to_string(ceiling) + " bytes (" +
                     (o.memory_limit > 0 ? "ellipsa_fit_options_set_memory_limit" : "ELLIPSA_MEMORY_LIMIT") +
                     "); nothing was allocated for it"};
}

}  // namespace ellipsa::capi

extern "C" ELLIPSA_API ellipsa_status ellipsa_fit_options_set_memory_limit(ellipsa_fit_options* options,
                                                                           int64_t bytes) {
  using namespace ellipsa::capi;
  return guard("ellipsa_fit_options_set_memory_limit", [&] {
    require_not_null(options, "options");
    if (bytes < 0)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "the memory limit must be >= 0 bytes (0 = ELLIPSA_MEMORY_LIMIT or none)"};
    options->memory_limit = bytes;
    return ELLIPSA_OK;
  });
}

extern "C" ELLIPSA_API ellipsa_status ellipsa_fit_memory_estimate(int64_t* bytes, const ellipsa_fit_options* options,
                                                                  int64_t rows, int64_t cols) {
  using namespace ellipsa::capi;
  return guard("ellipsa_fit_memory_estimate", [&] {
    require_not_null(bytes, "bytes");
    require_not_null(options, "options");
    if (rows < 0 || cols < 0) throw Misuse{ELLIPSA_ERR_SHAPE, "rows and cols must be >= 0"};
    const int64_t e = fit_memory_estimate(*options, rows, cols);
    if (e == std::numeric_limits<int64_t>::max())
      throw Misuse{ELLIPSA_ERR_MEMORY, "the working memory of a fit of " + std::to_string(rows) + " rows and " +
                                           std::to_string(cols) + " columns overflows a 64-bit size"};
    *bytes = e;
    return ELLIPSA_OK;
  });
}
