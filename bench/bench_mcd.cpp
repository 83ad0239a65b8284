// FAST-MCD and DetMCD timings as multiples of one classical covariance
// (core::mean_covariance) of the same data, measured in the same run.
// n in {1e3, 1e4, 1e5} x p in {5, 10, 20}; set ELLIPSA_BENCH_MCD_1E6=1 to add
// n = 1e6. Run with OPENBLAS_NUM_THREADS=1.
// Counters: cov_equiv = MCD time / classical covariance time.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <random>
#include <vector>

#include "core/mcd_deterministic.hpp"
#include "core/mcd_fast.hpp"
#include "core/moments.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd make_data(Index n, Index p) {
  std::mt19937_64 g(static_cast<std::uint64_t>(n * 31 + p));
  auto u01 = [&g]() { return (static_cast<double>(g() >> 11) + 0.5) * (1.0 / 9007199254740992.0); };
  Eigen::MatrixXd x(n, p);
  for (Index i = 0; i < n; ++i)
    for (Index j = 0; j < p; ++j) x(i, j) = std::sqrt(-2.0 * std::log(u01())) * std::cos(6.283185307179586 * u01());
  for (Index i = 0; i < n / 10; ++i) x.row(i).array() += 6.0;  // 10% shifted outliers
  return x;
}

// Median of several timed classical covariances (seconds).
double classical_seconds(const Eigen::MatrixXd& x) {
  std::vector<double> t;
  for (int r = 0; r < 9; ++r) {
    const auto a = std::chrono::steady_clock::now();
    MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
    benchmark::DoNotOptimize(mc.covariance.data());
    t.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - a).count());
  }
  std::nth_element(t.begin(), t.begin() + 4, t.end());
  return t[4];
}

template <class Fit>
void run(benchmark::State& state, Fit fit) {
  const Index n = state.range(0), p = state.range(1);
  const Eigen::MatrixXd x = make_data(n, p);
  const double cov = classical_seconds(x);
  double total = 0.0;
  int runs = 0;
  for (auto _ : state) {
    const auto a = std::chrono::steady_clock::now();
    RobustFit r = fit(make_view(x));
    benchmark::DoNotOptimize(r.scatter.data());
    total += std::chrono::duration<double>(std::chrono::steady_clock::now() - a).count();
    ++runs;
  }
  state.counters["cov_ms"] = 1e3 * cov;
  state.counters["cov_equiv"] = total / runs / cov;
}

void BM_FastMcd(benchmark::State& state) {
  run(state, [](DataView x) { return fast_mcd(x); });
}
void BM_DetMcd(benchmark::State& state) {
  run(state, [](DataView x) { return det_mcd(x); });
}

void sizes(benchmark::internal::Benchmark* b) {
  std::vector<std::int64_t> ns{1000, 10000, 100000};
  const char* big = std::getenv("ELLIPSA_BENCH_MCD_1E6");
  if (big && big[0] == '1') ns.push_back(1000000);
  for (std::int64_t n : ns)
    for (std::int64_t p : {5, 10, 20}) b->Args({n, p});
  b->Unit(benchmark::kMillisecond)->UseRealTime()->Iterations(1)->Repetitions(1);
}

}  // namespace

BENCHMARK(BM_FastMcd)->Apply(sizes);
BENCHMARK(BM_DetMcd)->Apply(sizes);
BENCHMARK_MAIN();
