#include "mixture_score.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>

#include "error.hpp"
#include "mixture_missing.hpp"

namespace ellipsa::core {

std::vector<CholeskyFactor> factor_components(const MixtureModel& model) {
  std::vector<CholeskyFactor> factors(static_cast<std::size_t>(model.components()));
  for (Index k = 0; k < model.components(); ++k)
    if (!factors[static_cast<std::size_t>(k)].compute(model.covariances[static_cast<std::size_t>(k)]))
      throw Error(ErrorKind::Singular,
                  "mixture component " + std::to_string(k) + ": covariance is not positive definite");
  return factors;
}

Eigen::VectorXd component_log_offsets(const MixtureModel& model, const std::vector<CholeskyFactor>& factors, Index p) {
  const double log_2pi_p = static_cast<double>(p) * std::log(2.0 * std::numbers::pi);
  Eigen::VectorXd offset(model.components());
  for (Index k = 0; k < model.components(); ++k)
    offset(k) = std::log(model.weights(k)) - 0.5 * (log_2pi_p + factors[static_cast<std::size_t>(k)].log_determinant());
  return offset;
}

Eigen::MatrixXd weighted_log_densities(const MixtureModel& model, const std::vector<CholeskyFactor>& factors,
                                       DataView x) {
  const Index k_count = model.components();
  const Eigen::VectorXd offset = component_log_offsets(model, factors, x.cols());
  Eigen::MatrixXd out(x.rows(), k_count);
  for (Index k = 0; k < k_count; ++k) {
    const auto& f = factors[static_cast<std::size_t>(k)];
    out.col(k) = f.squared_distances(x, model.means.row(k).transpose());
    out.col(k).array() = offset(k) - 0.5 * out.col(k).array();
  }
  return out;
}

Posterior normalise_posterior(Eigen::MatrixXd& lj) {
  const Index k_count = lj.cols();
  Posterior post;
  if (lj.rows() == 0) {
    post.log_density.resize(0);
    return post;
  }
  // Shift each row by its largest term, exponentiate once, normalise by the sum.
  Eigen::ArrayXd top = lj.col(0).array();
  for (Index k = 1; k < k_count; ++k) top = top.max(lj.col(k).array());
  Eigen::ArrayXXd e(lj.rows(), k_count);
  Eigen::ArrayXd sum = Eigen::ArrayXd::Zero(lj.rows());
  for (Index k = 0; k < k_count; ++k) {
    lj.col(k).array() -= top;
    e.col(k) = lj.col(k).array().exp();
    sum += e.col(k);
  }
  const Eigen::ArrayXd log_sum = sum.log();
  const Eigen::ArrayXd inv_sum = sum.inverse();
  double tlogt = 0.0;
  for (Index k = 0; k < k_count; ++k) {
    // log t = shifted term - log sum; 0 log 0 = 0 (a weight-0 component gives -inf).
    const Eigen::ArrayXd t = e.col(k) * inv_sum;
    tlogt += (t > 0.0).select(t * (lj.col(k).array() - log_sum), 0.0).sum();
    lj.col(k) = t.matrix();
  }
  post.log_density = (top + log_sum).matrix();
  post.sum_t_log_t = tlogt;
  return post;
}

Posterior e_step(const MixtureModel& model, const std::vector<CholeskyFactor>& factors, DataView x,
                 Eigen::MatrixXd& responsibilities) {
  constexpr Index kChunkRows = 4096;
  const Index n = x.rows();
  const Index k_count = model.components();
  const Eigen::VectorXd offset = component_log_offsets(model, factors, x.cols());
  responsibilities.resize(n, k_count);
  Posterior post;
  post.log_density.resize(n);
  Eigen::MatrixXd lj;
  Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> row_major;
  for (Index start = 0; start < n; start += kChunkRows) {
    const Index m = std::min(kChunkRows, n - start);
    lj.resize(m, k_count);
    // One row-major copy of the chunk per chunk: the K distance passes then read
    // it contiguously from cache instead of gathering strided columns K times.
    row_major = x.middleRows(start, m);
    const DataView rows = make_view(row_major.data(), m, x.cols(), x.cols(), 1);
    for (Index k = 0; k < k_count; ++k) {
      lj.col(k) = factors[static_cast<std::size_t>(k)].squared_distances(rows, model.means.row(k).transpose());
      lj.col(k).array() = offset(k) - 0.5 * lj.col(k).array();
    }
    const Posterior part = normalise_posterior(lj);
    responsibilities.middleRows(start, m) = lj;
    post.log_density.segment(start, m) = part.log_density;
    post.sum_t_log_t += part.sum_t_log_t;
  }
  return post;
}

Eigen::VectorXi hard_labels(const Eigen::MatrixXd& r) {
  Eigen::VectorXi labels(r.rows());
  for (Index i = 0; i < r.rows(); ++i) {
    Index best = 0;
    for (Index k = 1; k < r.cols(); ++k)
      if (r(i, k) > r(i, best)) best = k;
    labels(i) = std::isnan(r(i, 0)) ? -1 : static_cast<int>(best);
  }
  return labels;
}

MixtureScores score_mixture(const MixtureModel& model, DataView x) {
  if (x.cols() != model.dimension())
    throw Error(ErrorKind::Shape, "mixture scoring: the data have " + std::to_string(x.cols()) +
                                      " columns, the model " + std::to_string(model.dimension()));
  const MissingLayout layout = group_missing_patterns(x, "mixture scoring");  // also rejects infinite values
  Eigen::MatrixXd lj = observed_weighted_log_densities(model, layout, x);
  // Rows whose density underflows under every component (all terms -inf) are
  // beyond the model's scale: log-density -inf, memberships from the scaled
  // limit (far_row_memberships). The normalisation would give them NaN.
  std::vector<Index> far;
  for (Index i = 0; i < lj.rows(); ++i)
    if ((lj.row(i).array() == -std::numeric_limits<double>::infinity()).all()) far.push_back(i);
  MixtureScores s;
  // Rows without any observed value stay NaN through the normalisation.
  s.log_density = normalise_posterior(lj).log_density;
  for (Index i : far) {
    lj.row(i) = far_row_memberships(model, x, i).transpose();
    s.log_density(i) = -std::numeric_limits<double>::infinity();
  }
  s.responsibilities = std::move(lj);
  s.labels = hard_labels(s.responsibilities);
  return s;
}

OutlierCutoff calibrate_outlier_cutoff(const Eigen::VectorXd& fitting_log_density, double level) {
  if (!(level > 0.0 && level < 1.0))
    throw Error(ErrorKind::Argument, "outlier cutoff: level must lie strictly between 0 and 1");
  std::vector<double> v;
  v.reserve(static_cast<std::size_t>(fitting_log_density.size()));
  for (Index i = 0; i < fitting_log_density.size(); ++i)
    if (!std::isnan(fitting_log_density(i))) v.push_back(fitting_log_density(i));
  if (v.empty()) throw Error(ErrorKind::Data, "outlier cutoff: no fitting row has a log-density");
  std::sort(v.begin(), v.end());
  // Hyndman & Fan (1996), definition 7: h = (m - 1) level, interpolate between
  // the order statistics floor(h) and floor(h) + 1 (0-based).
  const double h = static_cast<double>(v.size() - 1) * level;
  const auto lo = static_cast<std::size_t>(std::floor(h));
  const std::size_t hi = std::min(lo + 1, v.size() - 1);
  OutlierCutoff c;
  c.level = level;
  c.log_density_cutoff = v[lo] + (h - static_cast<double>(lo)) * (v[hi] - v[lo]);
  return c;
}

Eigen::VectorXi flag_outliers(const Eigen::VectorXd& log_density, const OutlierCutoff& cutoff) {
  return (log_density.array() < cutoff.log_density_cutoff).cast<int>().matrix();
}

}  // namespace ellipsa::core
