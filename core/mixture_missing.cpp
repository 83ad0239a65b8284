#include "mixture_missing.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>

#include "cholesky.hpp"
#include "error.hpp"
#include "moments.hpp"

namespace ellipsa::core {
namespace {

Eigen::MatrixXd sub_matrix(const Eigen::MatrixXd& s, const std::vector<Index>& r, const std::vector<Index>& c) {
  Eigen::MatrixXd out(static_cast<Index>(r.size()), static_cast<Index>(c.size()));
  for (std::size_t j = 0; j < c.size(); ++j)
    for (std::size_t i = 0; i < r.size(); ++i) out(static_cast<Index>(i), static_cast<Index>(j)) = s(r[i], c[j]);
  return out;
}

Eigen::VectorXd sub_vector(const Eigen::VectorXd& v, const std::vector<Index>& idx) {
  Eigen::VectorXd out(static_cast<Index>(idx.size()));
  for (std::size_t i = 0; i < idx.size(); ++i) out(static_cast<Index>(i)) = v(idx[i]);
  return out;
}

CholeskyFactor factor_or_throw(const Eigen::MatrixXd& s, Index k) {
  CholeskyFactor f;
  if (!f.compute(s))
    throw Error(ErrorKind::Singular, "mixture component " + std::to_string(k) +
                                         ": covariance of the observed coordinates is not positive definite");
  return f;
}

}  // namespace

Eigen::MatrixXd observed_weighted_log_densities(const MixtureModel& model, const MissingLayout& layout, DataView x) {
  const Index k_count = model.components();
  Eigen::MatrixXd out = Eigen::MatrixXd::Constant(x.rows(), k_count, std::numeric_limits<double>::quiet_NaN());
  const double log_2pi = std::log(2.0 * std::numbers::pi);
  for (const MissingPattern& pat : layout.patterns) {
    const Eigen::MatrixXd xo = gather(x, pat.rows, pat.observed);
    const double q = static_cast<double>(pat.observed.size());
    for (Index k = 0; k < k_count; ++k) {
      const Eigen::MatrixXd& s = model.covariances[static_cast<std::size_t>(k)];
      const CholeskyFactor f = factor_or_throw(sub_matrix(s, pat.observed, pat.observed), k);
      const Eigen::VectorXd mu = sub_vector(model.means.row(k).transpose(), pat.observed);
      const Eigen::VectorXd d2 = f.squared_distances(make_view(xo), mu);
      const double offset = std::log(model.weights(k)) - 0.5 * (q * log_2pi + f.log_determinant());
      for (std::size_t i = 0; i < pat.rows.size(); ++i) out(pat.rows[i], k) = offset - 0.5 * d2(static_cast<Index>(i));
    }
  }
  return out;
}

Eigen::VectorXd far_row_memberships(const MixtureModel& model, DataView x, Index row) {
  const Index k_count = model.components(), p = x.cols();
  std::vector<Index> observed;
  for (Index j = 0; j < p; ++j)
    if (!std::isnan(x(row, j))) observed.push_back(j);
  const Eigen::VectorXd xo = sub_vector(x.row(row).transpose(), observed);
  int shift = scale_shift(xo);
  for (Index k = 0; k < k_count; ++k)
    shift = std::max(shift, scale_shift(sub_vector(model.means.row(k).transpose(), observed)));
  const double log_2pi = std::log(2.0 * std::numbers::pi), q = static_cast<double>(observed.size());
  Eigen::VectorXd u(k_count), offset(k_count);
  for (Index k = 0; k < k_count; ++k) {
    const CholeskyFactor f =
        factor_or_throw(sub_matrix(model.covariances[static_cast<std::size_t>(k)], observed, observed), k);
    const ScaledWhitening w = whiten_scaled(f.lower(), xo, sub_vector(model.means.row(k).transpose(), observed), shift);
    u(k) = w.w.squaredNorm();
    offset(k) = std::log(model.weights(k)) - 0.5 * (q * log_2pi + f.log_determinant());
  }
  // log t_k up to a constant, relative to the nearest component m: the
  // difference of scaled distances is formed before it is scaled back.
  Index m = 0;
  for (Index k = 1; k < k_count; ++k)
    if (u(k) < u(m)) m = k;
  Eigen::VectorXd log_t(k_count);
  for (Index k = 0; k < k_count; ++k) {
    const double gap = std::ldexp(u(k) - u(m), 2 * shift);  // +inf beyond double precision
    log_t(k) = std::isfinite(u(m)) ? offset(k) - offset(m) - 0.5 * gap : offset(k) - offset(m);
  }
  const double top = log_t.maxCoeff();
  Eigen::VectorXd t = (log_t.array() - top).exp().matrix();
  return t / t.sum();
}

ComponentMoments missing_component_moments(const MixtureModel& current, Index k, const MissingLayout& layout,
                                           DataView x, const Eigen::VectorXd& t) {
  const Index p = x.cols();
  if (!layout.all_missing_rows.empty())
    throw Error(ErrorKind::Data, "EM over missing values: row " + std::to_string(layout.all_missing_rows.front()) +
                                     " has no observed value");
  const Eigen::MatrixXd& s = current.covariances[static_cast<std::size_t>(k)];
  const Eigen::VectorXd mu = current.means.row(k).transpose();
  Eigen::MatrixXd filled = x;  // NaN entries are overwritten below
  Eigen::MatrixXd correction = Eigen::MatrixXd::Zero(p, p);
  for (const MissingPattern& pat : layout.patterns) {
    if (pat.missing.empty()) continue;
    const Index m = static_cast<Index>(pat.rows.size());
    const CholeskyFactor f = factor_or_throw(sub_matrix(s, pat.observed, pat.observed), k);
    const auto lower = f.lower().triangularView<Eigen::Lower>();
    // W = L^-1 Sigma_OM, so Sigma_MO Sigma_OO^-1 = W' L^-1 and the conditional
    // covariance is Sigma_MM - W'W.
    Eigen::MatrixXd w = sub_matrix(s, pat.observed, pat.missing);
    lower.solveInPlace(w);
    Eigen::MatrixXd z = gather(x, pat.rows, pat.observed).transpose();  // |O| x m
    z.colwise() -= sub_vector(mu, pat.observed);
    lower.solveInPlace(z);
    const Eigen::MatrixXd fill = (w.transpose() * z).colwise() + sub_vector(mu, pat.missing);
    double weight = 0.0;
    for (Index i = 0; i < m; ++i) {
      const Index row = pat.rows[static_cast<std::size_t>(i)];
      weight += t(row);
      for (std::size_t j = 0; j < pat.missing.size(); ++j) filled(row, pat.missing[j]) = fill(static_cast<Index>(j), i);
    }
    const Eigen::MatrixXd cond = sub_matrix(s, pat.missing, pat.missing) - w.transpose() * w;
    for (std::size_t b = 0; b < pat.missing.size(); ++b)
      for (std::size_t a = 0; a < pat.missing.size(); ++a)
        correction(pat.missing[a], pat.missing[b]) += weight * cond(static_cast<Index>(a), static_cast<Index>(b));
  }
  MomentAccumulator acc(p);
  acc.add(make_view(filled), t);
  ComponentMoments out;
  out.weight = acc.weight_sum();
  out.mean = acc.mean();
  out.scatter = acc.cross_products() + correction;
  return out;
}

MixtureModel provisional_missing_model(DataView x, const Eigen::MatrixXd& r, CovarianceStructure structure) {
  const Index p = x.cols();
  const Index k_count = r.cols();
  const Eigen::MatrixXd observed = (x.array().isNaN()).select(0.0, x.array()).matrix();
  const Eigen::MatrixXd seen = (x.array().isNaN()).select(0.0, Eigen::MatrixXd::Ones(x.rows(), p)).matrix();
  Eigen::VectorXd variance(p);
  for (Index j = 0; j < p; ++j) {
    const double count = seen.col(j).sum();
    const double mean = observed.col(j).sum() / count;
    const double ss = ((observed.col(j).array() - mean) * seen.col(j).array()).square().sum();
    variance(j) = ss / count;
  }
  MixtureModel model;
  model.structure = structure;
  model.weights = r.colwise().sum().transpose() / r.colwise().sum().sum();
  model.means.resize(k_count, p);
  for (Index k = 0; k < k_count; ++k) {
    for (Index j = 0; j < p; ++j) {
      const double w = (r.col(k).array() * seen.col(j).array()).sum();
      model.means(k, j) =
          w > 0.0 ? (r.col(k).array() * observed.col(j).array()).sum() / w : observed.col(j).sum() / seen.col(j).sum();
    }
    model.covariances.push_back(variance.asDiagonal());
  }
  return model;
}

}  // namespace ellipsa::core
