// Latency of cancellation, next to the time of one whole fit of the same data
// (ratios in the same run). FAST-MCD (nested scheme) and EM (K = 3, 5
// restarts), n in {2e4, 1e5}. A host decides to stop at any moment and is
// heard at the next callback, so the worst latency is the longest gap between
// two consecutive callbacks of a whole fit (max_gap_ms) plus the time from a
// callback that says stop to the return of the call (unwind_ms, measured
// with a stop at the middle call). Run with OPENBLAS_NUM_THREADS=1.
//
// Times are CPU time of the calling thread (CLOCK_THREAD_CPUTIME_ID), as in
// bench_mcd.cpp. Counters: full_ms (one whole fit), max_gap_ms, unwind_ms
// (the worst of the iterations), latency_ratio = (max_gap_ms + unwind_ms) /
// full_ms, calls (callbacks of a whole fit). The figures measured on the
// development machine are in docs/robustness.md.
#include <benchmark/benchmark.h>
#include <time.h>

#include <algorithm>
#include <cmath>
#include <random>

#include "core/error.hpp"
#include "core/mcd_fast.hpp"
#include "core/mixture_em.hpp"

using namespace ellipsa::core;

namespace {

double thread_cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

// Invented rows: normal, three groups apart, a tenth of them shifted.
Eigen::MatrixXd make_data(Index n, Index p) {
  std::mt19937_64 g(static_cast<std::uint64_t>(n * 7 + p));
  std::normal_distribution<double> z;
  Eigen::MatrixXd x(n, p);
  for (Index i = 0; i < n; ++i)
    for (Index j = 0; j < p; ++j) x(i, j) = z(g) + 4.0 * static_cast<double>(i % 3) + (i % 10 == 0 ? 6.0 : 0.0);
  return x;
}

template <class Fit>
void measure(benchmark::State& state, Fit&& fit) {
  // One whole fit: its duration and its number of callbacks.
  int calls = 0;
  double t0 = thread_cpu_seconds();
  double last = t0, max_gap = 0.0;
  fit([&](const char*, double) {
    const double now = thread_cpu_seconds();
    max_gap = std::max(max_gap, now - last);
    last = now;
    ++calls;
    return true;
  });
  const double full = thread_cpu_seconds() - t0;
  max_gap = std::max(max_gap, t0 + full - last);  // the last call to the return
  double latency = 0.0;
  for (auto _ : state) {
    int seen = 0;
    double stopped_at = 0.0;
    try {
      fit([&](const char*, double) {
        if (++seen < calls / 2) return true;
        stopped_at = thread_cpu_seconds();
        return false;
      });
    } catch (const Error& e) {
      if (e.kind() != ErrorKind::Cancelled) throw;
    }
    latency = std::max(latency, thread_cpu_seconds() - stopped_at);
  }
  state.counters["full_ms"] = 1e3 * full;
  state.counters["max_gap_ms"] = 1e3 * max_gap;
  state.counters["unwind_ms"] = 1e3 * latency;  // the worst of the iterations
  state.counters["latency_ratio"] = (max_gap + latency) / full;
  state.counters["calls"] = calls;
}

void BM_CancelFastMcd(benchmark::State& state) {
  const Eigen::MatrixXd x = make_data(state.range(0), 10);
  measure(state, [&](ProgressCallback cb) {
    FastMcdOptions o;
    o.progress = std::move(cb);
    return fast_mcd(make_view(x), o);
  });
}

void BM_CancelEm(benchmark::State& state) {
  const Eigen::MatrixXd x = make_data(state.range(0), 5);
  measure(state, [&](MixtureProgress cb) {
    MixtureOptions o;
    o.components = 3;
    o.restarts = 5;
    o.tolerance = 1e-12;  // long runs: the cap of 500 iterations per start
    o.progress = std::move(cb);
    return fit_mixture(make_view(x), o);
  });
}

}  // namespace

BENCHMARK(BM_CancelFastMcd)->Arg(20000)->Arg(100000)->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CancelEm)->Arg(20000)->Arg(100000)->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK_MAIN();
