#include "mardia.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "cholesky.hpp"
#include "distributions.hpp"
#include "error.hpp"
#include "missing.hpp"
#include "moments.hpp"

namespace ellipsa::core {

MardiaTest mardia(DataView x, double kurtosis_centre) {
  require_finite(x, "Mardia's test");
  const Index n = x.rows(), p = x.cols();
  if (p < 1) throw Error(ErrorKind::Shape, "Mardia's test: no columns");
  if (n < p + 2)
    throw Error(ErrorKind::Data,
                "Mardia's test: needs at least p + 2 = " + std::to_string(p + 2) + " rows, got " + std::to_string(n));
  const MeanCovariance mc = mean_covariance(x, Normalisation::ByCount);
  const CholeskyFactor chol(mc.covariance);
  if (!chol.ok())
    throw Error(ErrorKind::Singular, "Mardia's test: the covariance of the rows is not positive definite");
  // Whitened rows z_i = L^-1 (x_i - m), as the columns of zt' (zt is n x p).
  Eigen::MatrixXd zt = x.rowwise() - mc.mean.transpose();
  chol.lower().triangularView<Eigen::Lower>().solveInPlace(zt.transpose());

  const double nd = static_cast<double>(n), pd = static_cast<double>(p);
  MardiaTest out;
  out.n = n;
  out.p = p;
  out.kurtosis = zt.rowwise().squaredNorm().array().square().sum() / nd;
  // Third moments m_rst = mean_i z_ir z_is z_it for every pair r <= s and
  // every t, as one matrix product per chunk of rows: M += Z_chunk' W_chunk
  // with W's columns the products z_r * z_s (a BLAS product, n p^3 / 2 flops,
  // memory of one chunk).
  const Index pairs = p * (p + 1) / 2;
  constexpr Index kChunk = 2048;
  Eigen::MatrixXd third = Eigen::MatrixXd::Zero(p, pairs);
  Eigen::MatrixXd w(std::min(n, kChunk), pairs);
  for (Index start = 0; start < n; start += kChunk) {
    const Index m = std::min(kChunk, n - start);
    const auto z = zt.middleRows(start, m);
    Index k = 0;
    for (Index r = 0; r < p; ++r)
      for (Index s = r; s < p; ++s) w.col(k++).head(m) = z.col(r).cwiseProduct(z.col(s));
    third.noalias() += z.transpose() * w.topRows(m);
  }
  third /= nd;
  // b1 = sum over all ordered (r, s, t) of m_rst^2; each unordered triple
  // r <= s <= t stands for 1, 3 or 6 ordered ones.
  double b1 = 0.0;
  Index k = 0;
  for (Index r = 0; r < p; ++r)
    for (Index s = r; s < p; ++s, ++k)
      for (Index t = s; t < p; ++t) {
        const double multiplicity = (r == s && s == t) ? 1.0 : (r == s || s == t) ? 3.0 : 6.0;
        b1 += multiplicity * third(t, k) * third(t, k);
      }
  out.skewness = b1;
  out.skewness_statistic = nd * b1 / 6.0;
  out.skewness_df = pd * (pd + 1.0) * (pd + 2.0) / 6.0;
  out.skewness_p_value = chi2_sf(out.skewness_statistic, out.skewness_df);
  out.kurtosis_expected = kurtosis_centre < 0.0 ? pd * (pd + 2.0) : kurtosis_centre;
  out.kurtosis_z = (out.kurtosis - out.kurtosis_expected) / std::sqrt(8.0 * pd * (pd + 2.0) / nd);
  // Two-sided normal tail as P(chi2(1) > z^2).
  out.kurtosis_p_value = chi2_sf(out.kurtosis_z * out.kurtosis_z, 1.0);
  return out;
}

double truncated_kurtosis_centre(Index p, double level) {
  if (p < 1) throw Error(ErrorKind::Argument, "Mardia's test: p must be at least 1");
  if (!(level > 0.0 && level < 1.0)) throw Error(ErrorKind::Argument, "Mardia's test: level must lie in (0, 1)");
  const double pd = static_cast<double>(p), c = chi2_quantile(level, pd);
  const double f2 = chi2_cdf(c, pd + 2.0);
  return pd * (pd + 2.0) * chi2_cdf(c, pd + 4.0) * level / (f2 * f2);
}

}  // namespace ellipsa::core
