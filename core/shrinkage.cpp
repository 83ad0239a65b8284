#include "shrinkage.hpp"

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "error.hpp"
#include "missing.hpp"
#include "moments.hpp"
#include "parallel.hpp"

namespace ellipsa::core {
namespace {

constexpr Index kChunkRows = 4096;

// sum_k |(x_k - mean) / unit|^4 over the rows, chunked so that no n x p centred
// copy exists. Chunk sums are added in chunk order: the same total for any
// thread count. unit is a power of two (shrinkage_unit), so the division is exact.
double sum_fourth_powers_of_norms(DataView x, const Eigen::VectorXd& mean, int threads, double unit) {
  const Index chunks = chunk_count(x.rows(), kChunkRows);
  std::vector<double> partial(static_cast<std::size_t>(chunks), 0.0);
  std::vector<Eigen::MatrixXd> scratch(static_cast<std::size_t>(parallel_workers(threads, chunks)));
  parallel_for(threads, chunks, [&](Index c, int worker) {
    const Index start = c * kChunkRows;
    const Index m = std::min(kChunkRows, x.rows() - start);
    Eigen::MatrixXd& chunk = scratch[static_cast<std::size_t>(worker)];
    chunk = x.middleRows(start, m);
    chunk.rowwise() -= mean.transpose();
    chunk /= unit;
    partial[static_cast<std::size_t>(c)] = chunk.rowwise().squaredNorm().array().square().sum();
  });
  double total = 0.0;
  for (double v : partial) total += v;
  return total;
}

// Ledoit & Wolf (2004), the consistent estimators of their Section 3, with the normalised
// Frobenius norm |A|^2 = tr(AA')/p:
//   d2 = |S - mu I|^2 = tr(S^2)/p - mu^2,
//   b2bar = (1/n^2) sum_k |x_k x_k' - S|^2.
// Expanding |x x' - S|^2 = (|x|^4 - 2 x'Sx + tr(S^2))/p and using
// sum_k x_k' S x_k = n tr(S^2) gives b2bar = (sum_k |x_k|^4 - n tr(S^2)) / (p n^2),
// so no p x p matrix is formed per row.
// d2 is evaluated as |S - mu I|_F^2 / p directly, not as a difference of traces,
// which would cancel when S is close to the target.
double ledoit_wolf_intensity(double trace_s2, double spread, double sum_fourth, double n, double p) {
  const double d2 = spread / p;
  const double b2bar = std::max(0.0, (sum_fourth - n * trace_s2) / (p * n * n));
  const double b2 = std::min(b2bar, d2);
  if (!(d2 > 0.0)) return 1.0;  // S is already mu*I
  return std::clamp(b2 / d2, 0.0, 1.0);
}

// Chen, Wiesel, Eldar & Hero (2010), the OAS intensity:
//   rho = min(1, ((1-2/p) tr(S^2) + tr(S)^2) / ((n+1-2/p) (tr(S^2) - tr(S)^2/p))).
// The denominator's tr(S^2) - tr(S)^2/p equals |S - mu I|_F^2 (`spread`).
double oas_intensity(double trace_s2, double trace_s, double spread, double n, double p) {
  const double numerator = (1.0 - 2.0 / p) * trace_s2 + trace_s * trace_s;
  if (!(spread > 0.0)) return 1.0;  // S is already a multiple of I
  return std::clamp(numerator / ((n + 1.0 - 2.0 / p) * spread), 0.0, 1.0);
}

}  // namespace

// The shape and row-count checks are shrinkage_from_moments'; only the
// finiteness of the raw data must be checked here.
ShrinkageEstimate shrinkage_estimate(DataView x, ShrinkageMethod method, int threads) {
  require_finite(x, "shrinkage estimate");
  MomentAccumulator acc(x.cols());
  acc.set_threads(threads);
  acc.add(x);
  const Eigen::MatrixXd cross = acc.cross_products();
  const double mu = cross.trace() / (static_cast<double>(std::max<Index>(x.rows(), 1)) * static_cast<double>(x.cols()));
  const double unit = mu > 0.0 && std::isfinite(mu) ? shrinkage_unit(mu) : 1.0;
  const double fourth =
      method == ShrinkageMethod::LedoitWolf ? sum_fourth_powers_of_norms(x, acc.mean(), threads, unit) : 0.0;
  return shrinkage_from_moments(x.rows(), acc.mean(), cross, fourth, method, unit);
}

double shrinkage_unit(double mu) {
  int e = 0;
  std::frexp(std::sqrt(mu), &e);
  return std::ldexp(1.0, e);
}

ShrinkageEstimate shrinkage_from_moments(Index n, const Eigen::VectorXd& mean, const Eigen::MatrixXd& cross_products,
                                         double sum_fourth_powers_of_norms, ShrinkageMethod method,
                                         double fourth_unit) {
  const Index p = mean.size();
  if (p < 1) throw Error(ErrorKind::Shape, "shrinkage estimate: no columns");
  if (cross_products.rows() != p || cross_products.cols() != p)
    throw Error(ErrorKind::Shape, "shrinkage estimate: cross-products do not match the mean");
  if (n < 2) throw Error(ErrorKind::Data, "shrinkage estimate: needs at least 2 rows, got " + std::to_string(n));
  ShrinkageEstimate out;
  out.rows = n;
  out.mean = mean;
  out.sample_covariance = cross_products / static_cast<double>(n);
  const Eigen::MatrixXd& s = out.sample_covariance;
  const double trace_s = s.trace();
  const double mu = trace_s / static_cast<double>(p);
  if (!(mu > 0.0)) throw Error(ErrorKind::Data, "shrinkage estimate: every column is constant (trace of S is 0)");
  // Every term of the intensities is of degree 4 in the data: computed in
  // units of u^2 = shrinkage_unit(mu)^2 (exact: a power of two).
  const double unit = shrinkage_unit(mu), unit2 = unit * unit;
  const Eigen::MatrixXd su = s / unit2;
  const double trace_s2 = su.squaredNorm();
  Eigen::MatrixXd deviation = su;
  deviation.diagonal().array() -= mu / unit2;
  const double spread = deviation.squaredNorm();
  const double nd = static_cast<double>(n), pd = static_cast<double>(p);
  // The fourth powers from fourth_unit^4 to unit^4 units (both powers of two).
  const double r2 = (fourth_unit / unit) * (fourth_unit / unit);
  const double fourth = sum_fourth_powers_of_norms * r2 * r2;

  out.target_scale = mu;
  out.intensity = method == ShrinkageMethod::LedoitWolf ? ledoit_wolf_intensity(trace_s2, spread, fourth, nd, pd)
                                                        : oas_intensity(trace_s2, trace_s / unit2, spread, nd, pd);
  out.covariance = (1.0 - out.intensity) * s;
  out.covariance.diagonal().array() += out.intensity * mu;
  return out;
}

}  // namespace ellipsa::core
