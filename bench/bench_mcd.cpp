// FAST-MCD and DetMCD timings as multiples of one classical covariance
// (core::mean_covariance) of the same data, measured in the same run; the Qn
// scale as a multiple of one std::sort of the same sample.
// n in {1e3, 1e4, 1e5} x p in {5, 10, 20}; set ELLIPSA_BENCH_MCD_1E6=1 to add
// n = 1e6 (p = 5, 10). Run with OPENBLAS_NUM_THREADS=1.
//
// Times are CPU time of the calling thread (CLOCK_THREAD_CPUTIME_ID), so that
// other processes on a shared machine inflate them less than wall time; this
// is only meaningful when BLAS runs on the calling thread, hence the
// single-thread requirement (a warning is printed otherwise). Use
// --benchmark_repetitions=N --benchmark_report_aggregates_only=true and read
// the medians.
// Counters: cov_ms (CPU ms of one classical covariance, median of 9),
// mcd_ms (CPU ms of the fit), cov_equiv = mcd_ms / cov_ms;
// for Qn: qn_ms, sort_ms, sort_equiv = qn_ms / sort_ms.
#include <benchmark/benchmark.h>
#include <time.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <random>
#include <vector>

#include "core/mcd_deterministic.hpp"
#include "core/mcd_fast.hpp"
#include "core/moments.hpp"
#include "core/robust_scale.hpp"

using namespace ellipsa::core;

namespace {

double thread_cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

Eigen::MatrixXd make_data(Index n, Index p) {
  std::mt19937_64 g(static_cast<std::uint64_t>(n * 31 + p));
  auto u01 = [&g]() { return (static_cast<double>(g() >> 11) + 0.5) * (1.0 / 9007199254740992.0); };
  Eigen::MatrixXd x(n, p);
  for (Index i = 0; i < n; ++i)
    for (Index j = 0; j < p; ++j) x(i, j) = std::sqrt(-2.0 * std::log(u01())) * std::cos(6.283185307179586 * u01());
  for (Index i = 0; i < n / 10; ++i) x.row(i).array() += 6.0;  // 10% shifted outliers
  return x;
}

// Median CPU time of 9 evaluations of f (seconds).
template <class F>
double median_seconds(F f) {
  std::vector<double> t;
  for (int r = 0; r < 9; ++r) {
    const double a = thread_cpu_seconds();
    f();
    t.push_back(thread_cpu_seconds() - a);
  }
  std::nth_element(t.begin(), t.begin() + 4, t.end());
  return t[4];
}

double classical_seconds(const Eigen::MatrixXd& x) {
  return median_seconds([&x]() {
    MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
    benchmark::DoNotOptimize(mc.covariance.data());
  });
}

template <class Fit>
void run(benchmark::State& state, Fit fit) {
  const Index n = state.range(0), p = state.range(1);
  const Eigen::MatrixXd x = make_data(n, p);
  const double cov = classical_seconds(x);
  double total = 0.0;
  int runs = 0;
  for (auto _ : state) {
    const double a = thread_cpu_seconds();
    RobustFit r = fit(make_view(x));
    benchmark::DoNotOptimize(r.scatter.data());
    total += thread_cpu_seconds() - a;
    ++runs;
  }
  state.counters["cov_ms"] = 1e3 * cov;
  state.counters["mcd_ms"] = 1e3 * total / runs;
  state.counters["cov_equiv"] = total / runs / cov;
}

void BM_FastMcd(benchmark::State& state) {
  run(state, [](DataView x) { return fast_mcd(x); });
}
void BM_DetMcd(benchmark::State& state) {
  run(state, [](DataView x) { return det_mcd(x); });
}

void BM_Qn(benchmark::State& state) {
  const Index n = state.range(0);
  const Eigen::VectorXd x = make_data(n, 1).col(0);
  const double sort_s = median_seconds([&x]() {
    std::vector<double> v(x.data(), x.data() + x.size());
    std::sort(v.begin(), v.end());
    benchmark::DoNotOptimize(v.data());
  });
  double total = 0.0;
  int runs = 0;
  for (auto _ : state) {
    const double a = thread_cpu_seconds();
    double q = qn_scale(x);
    benchmark::DoNotOptimize(q);
    total += thread_cpu_seconds() - a;
    ++runs;
  }
  state.counters["qn_ms"] = 1e3 * total / runs;
  state.counters["sort_ms"] = 1e3 * sort_s;
  state.counters["sort_equiv"] = total / runs / sort_s;
}

void sizes(benchmark::internal::Benchmark* b) {
  for (std::int64_t n : {1000, 10000, 100000})
    for (std::int64_t p : {5, 10, 20}) b->Args({n, p});
  const char* big = std::getenv("ELLIPSA_BENCH_MCD_1E6");
  if (big && big[0] == '1')
    for (std::int64_t p : {5, 10}) b->Args({1000000, p});
  b->Unit(benchmark::kMillisecond)->Iterations(1);
}

void qn_sizes(benchmark::internal::Benchmark* b) {
  for (std::int64_t n : {1000, 10000, 100000, 1000000}) b->Args({n});
  b->Unit(benchmark::kMillisecond)->Iterations(3);
}

}  // namespace

BENCHMARK(BM_Qn)->Apply(qn_sizes);
BENCHMARK(BM_FastMcd)->Apply(sizes);
BENCHMARK(BM_DetMcd)->Apply(sizes);

int main(int argc, char** argv) {
  const char* threads = std::getenv("OPENBLAS_NUM_THREADS");
  if (!threads || std::strcmp(threads, "1") != 0)
    std::fprintf(stderr,
                 "bench_mcd: set OPENBLAS_NUM_THREADS=1; CPU times of the calling thread miss BLAS worker threads\n");
  benchmark::Initialize(&argc, argv);
  if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 1;
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}
