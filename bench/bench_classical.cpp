// Classical covariance and squared distances on 1e6 x 50, each timed against the
// BLAS bound for the same work measured in the same iteration:
//  - covariance vs dsyrk on the already-centred data (the cross-product alone);
//  - distances vs one dtrsm with 1e6 right-hand sides (the triangular solve alone,
//    data already centred and laid out as the solve wants it).
// The covariance of column-major data reads the caller's chunks in place (no
// centred copy) when the offset is small, as here (about 6 sd).
// Counters: `ratio` = implementation time / bound time (goal: <= 1.3 for the
// covariance, <= 1.5 for the distances). Run with OPENBLAS_NUM_THREADS=1.
#include <benchmark/benchmark.h>
#include <cblas.h>

#include <time.h>

#include <random>

#include "core/cholesky.hpp"
#include "core/classical.hpp"
#include "core/moments.hpp"
#include "core/scoring.hpp"

using namespace ellipsa::core;

namespace {

constexpr Index kRows = 1000000;
constexpr Index kCols = 50;

const Eigen::MatrixXd& data() {
  static const Eigen::MatrixXd x = [] {
    std::mt19937_64 rng(7);
    std::normal_distribution<double> g;
    Eigen::MatrixXd z(kRows, kCols), mix(kCols, kCols);
    for (Index j = 0; j < kCols; ++j)
      for (Index i = 0; i < kRows; ++i) z(i, j) = g(rng);
    for (Index j = 0; j < kCols; ++j)
      for (Index i = 0; i < kCols; ++i) mix(i, j) = 0.2 * g(rng) + (i == j ? 1.0 : 0.0);
    Eigen::MatrixXd x = z * mix;
    x.array() += 10.0;
    return x;
  }();
  return x;
}

// Thread CPU time: both the bound and the implementation run on this thread
// (OPENBLAS_NUM_THREADS=1), and on a shared machine CPU time is steadier than
// wall time.
struct CpuTime {
  double value;
};
CpuTime now() {
  timespec ts{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return {static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec)};
}
double seconds_since(CpuTime t0) { return now().value - t0.value; }

void BM_ClassicalCovariance_vs_Syrk(benchmark::State& state) {
  const Eigen::MatrixXd& x = data();
  const Eigen::MatrixXd centred = x.rowwise() - x.colwise().mean();
  Eigen::MatrixXd c(kCols, kCols);
  double bound = 0.0, impl = 0.0;
  for (auto _ : state) {
    auto t0 = now();
    cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, kCols, kRows, 1.0, centred.data(), kRows, 0.0, c.data(), kCols);
    benchmark::DoNotOptimize(c.data());
    bound += seconds_since(t0);
    t0 = now();
    const ClassicalEstimate fit = classical_estimate(make_view(x), Normalisation::ByCountMinusOne);
    benchmark::DoNotOptimize(fit.covariance.data());
    const double t = seconds_since(t0);
    impl += t;
    state.SetIterationTime(t);
  }
  state.counters["syrk_s"] = bound / static_cast<double>(state.iterations());
  state.counters["ratio"] = impl / bound;
}

void BM_MeanCovariance_vs_Syrk(benchmark::State& state) {
  // The accumulator alone, without classical_estimate's input checks.
  const Eigen::MatrixXd& x = data();
  const Eigen::MatrixXd centred = x.rowwise() - x.colwise().mean();
  Eigen::MatrixXd c(kCols, kCols);
  double bound = 0.0, impl = 0.0;
  for (auto _ : state) {
    auto t0 = now();
    cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, kCols, kRows, 1.0, centred.data(), kRows, 0.0, c.data(), kCols);
    benchmark::DoNotOptimize(c.data());
    bound += seconds_since(t0);
    t0 = now();
    const MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
    benchmark::DoNotOptimize(mc.covariance.data());
    const double t = seconds_since(t0);
    impl += t;
    state.SetIterationTime(t);
  }
  state.counters["syrk_s"] = bound / static_cast<double>(state.iterations());
  state.counters["ratio"] = impl / bound;
}

void BM_ClassicalCovarianceRowMajor_vs_Syrk(benchmark::State& state) {
  // The same data in row-major order (a C caller's usual layout): each chunk is
  // copied to column-major first so that every layout gives bit-identical fits.
  using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  const RowMajor xr = data();
  const Eigen::MatrixXd centred = data().rowwise() - data().colwise().mean();
  Eigen::MatrixXd c(kCols, kCols);
  double bound = 0.0, impl = 0.0;
  for (auto _ : state) {
    auto t0 = now();
    cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, kCols, kRows, 1.0, centred.data(), kRows, 0.0, c.data(), kCols);
    benchmark::DoNotOptimize(c.data());
    bound += seconds_since(t0);
    t0 = now();
    const ClassicalEstimate fit =
        classical_estimate(make_view(xr.data(), kRows, kCols, kCols, 1), Normalisation::ByCountMinusOne);
    benchmark::DoNotOptimize(fit.covariance.data());
    const double t = seconds_since(t0);
    impl += t;
    state.SetIterationTime(t);
  }
  state.counters["syrk_s"] = bound / static_cast<double>(state.iterations());
  state.counters["ratio"] = impl / bound;
}

// Shared set-up of the distance benchmarks: a model fitted to the data and the
// centred data transposed (p x n), the layout a left-side dtrsm wants.
struct DistanceSetup {
  Eigen::VectorXd mean;
  Eigen::MatrixXd cov;
  CholeskyFactor chol;
  Eigen::MatrixXd centred_t;
  DistanceSetup() {
    const MeanCovariance mc = mean_covariance(make_view(data()), Normalisation::ByCountMinusOne);
    mean = mc.mean;
    cov = mc.covariance;
    chol.compute(cov);
    centred_t = (data().rowwise() - mean.transpose()).transpose();
  }
};

double trsm_bound(const DistanceSetup& s, Eigen::MatrixXd& work) {
  work = s.centred_t;  // untimed copy: the solve overwrites its input
  const auto t0 = now();
  cblas_dtrsm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, kCols, kRows, 1.0,
              s.chol.lower().data(), kCols, work.data(), kCols);
  benchmark::DoNotOptimize(work.data());
  return seconds_since(t0);
}

void BM_ScorerDistances_vs_Trsm(benchmark::State& state) {
  static const DistanceSetup setup;
  const MahalanobisScorer scorer(setup.mean, setup.chol);
  ScoringOptions opt;
  opt.p_values = false;  // distances and flags only; p-values are per-row special functions
  Eigen::MatrixXd work;
  double bound = 0.0, impl = 0.0;
  for (auto _ : state) {
    bound += trsm_bound(setup, work);
    const auto t0 = now();
    const RowScores s = scorer.score(make_view(data()), opt);
    benchmark::DoNotOptimize(s.d2.data());
    const double t = seconds_since(t0);
    impl += t;
    state.SetIterationTime(t);
  }
  state.counters["trsm_s"] = bound / static_cast<double>(state.iterations());
  state.counters["ratio"] = impl / bound;
}

void BM_CholeskyDistances_vs_Trsm(benchmark::State& state) {
  static const DistanceSetup setup;
  Eigen::MatrixXd work;
  double bound = 0.0, impl = 0.0;
  for (auto _ : state) {
    bound += trsm_bound(setup, work);
    const auto t0 = now();
    const Eigen::VectorXd d2 = setup.chol.squared_distances(make_view(data()), setup.mean);
    benchmark::DoNotOptimize(d2.data());
    const double t = seconds_since(t0);
    impl += t;
    state.SetIterationTime(t);
  }
  state.counters["trsm_s"] = bound / static_cast<double>(state.iterations());
  state.counters["ratio"] = impl / bound;
}

}  // namespace

BENCHMARK(BM_ClassicalCovariance_vs_Syrk)->UseManualTime()->Unit(benchmark::kMillisecond)->MinTime(2.0);
BENCHMARK(BM_MeanCovariance_vs_Syrk)->UseManualTime()->Unit(benchmark::kMillisecond)->MinTime(2.0);
BENCHMARK(BM_ClassicalCovarianceRowMajor_vs_Syrk)->UseManualTime()->Unit(benchmark::kMillisecond)->MinTime(2.0);
BENCHMARK(BM_ScorerDistances_vs_Trsm)->UseManualTime()->Unit(benchmark::kMillisecond)->MinTime(2.0);
BENCHMARK(BM_CholeskyDistances_vs_Trsm)->UseManualTime()->Unit(benchmark::kMillisecond)->MinTime(2.0);

BENCHMARK_MAIN();
