#include "mcd_common.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "distributions.hpp"
#include "error.hpp"
#include "moments.hpp"
#include "robust_scale.hpp"

namespace ellipsa::core {

Index mcd_subset_size(Index n, Index p, double alpha) {
  if (!(alpha >= 0.5 && alpha <= 1.0))
    throw Error(ErrorKind::Argument, "MCD: alpha must lie in [0.5, 1] (got " + std::to_string(alpha) + ")");
  const Index half = (n + p + 1) / 2;
  const double h = std::floor(static_cast<double>(2 * half - n) +
                              2.0 * static_cast<double>(n - half) * alpha);
  return std::clamp<Index>(static_cast<Index>(h), std::min(half, n), n);
}

// Croux & Haesbroeck (1999): the covariance of the fraction q = h/n of a
// normal sample nearest the centre estimates F_{p+2}(chi2q(p, q))/q times Sigma.
double mcd_consistency_factor(Index h, Index n, Index p) {
  if (h >= n) return 1.0;
  const double q = static_cast<double>(h) / static_cast<double>(n);
  const double pd = static_cast<double>(p);
  return q / chi2_cdf(chi2_quantile(q, pd), pd + 2.0);
}

double reweight_consistency_factor(double level, Index p) {
  if (!(level > 0.0 && level < 1.0))
    throw Error(ErrorKind::Argument, "MCD: reweighting level must lie in (0, 1)");
  const double pd = static_cast<double>(p);
  return level / chi2_cdf(chi2_quantile(level, pd), pd + 2.0);
}

namespace mcd_detail {

void report_progress(const ProgressCallback& cb, const char* stage, double fraction) {
  if (cb && !cb(stage, fraction))
    throw Error(ErrorKind::Cancelled, std::string("cancelled by the progress callback during ") + stage);
}

void check_input(DataView x, double alpha, bool need_more_rows, const char* method) {
  const Index n = x.rows(), p = x.cols();
  const std::string m(method);
  if (p < 1) throw Error(ErrorKind::Shape, m + ": data have no columns");
  if (n < 2) throw Error(ErrorKind::Data, m + ": needs at least 2 rows");
  if (need_more_rows && n <= p)
    throw Error(ErrorKind::Data, m + ": needs more rows than columns (n = " + std::to_string(n) +
                                     ", p = " + std::to_string(p) +
                                     "); for p >= n use the regularised MCD (MRCD)");
  if (!(alpha >= 0.5 && alpha <= 1.0))
    throw Error(ErrorKind::Argument, m + ": alpha must lie in [0.5, 1] (got " + std::to_string(alpha) + ")");
  if (!x.allFinite())
    throw Error(ErrorKind::Data, m + ": data contain NaN or infinite values; drop incomplete rows first (complete_rows)");
  bool all_identical = true;
  for (Index j = 0; j < p && all_identical; ++j)
    all_identical = x.col(j).minCoeff() == x.col(j).maxCoeff();
  if (all_identical) throw Error(ErrorKind::Data, m + ": all rows are identical; no scatter can be estimated");
}

Standardised standardise(DataView x, ColumnScale kind) {
  const Index n = x.rows(), p = x.cols();
  Standardised s;
  s.centre.resize(p);
  s.scale.resize(p);
  s.z.resize(n, p);
  Eigen::VectorXd col;
  for (Index j = 0; j < p; ++j) {
    col = x.col(j);
    const double m = median(col);
    double sc = kind == ColumnScale::Qn ? qn_scale(col) : mad(col);
    if (!(sc > 0.0)) {
      // More than half the values coincide: fall back to the standard deviation
      // (the C-steps then find the exact fit if h rows share that value).
      sc = std::sqrt((col.array() - col.mean()).square().mean());
    }
    if (!(sc > 0.0)) {
      sc = 1.0;
      if (s.constant_column < 0) s.constant_column = j;
    }
    s.centre(j) = m;
    s.scale(j) = sc;
    s.z.col(j) = (col.array() - m) / sc;
  }
  return s;
}

SubsetFit fit_subset(const Eigen::MatrixXd& z, std::vector<Index> rows) {
  SubsetFit f;
  f.rows = std::move(rows);
  const Index k = static_cast<Index>(f.rows.size()), p = z.cols();
  // Gather column by column: z is column-major, so each column's reads stay
  // within one contiguous array.
  Eigen::MatrixXd g(k, p);
  for (Index j = 0; j < p; ++j) {
    const double* src = z.col(j).data();
    double* dst = g.col(j).data();
    for (Index i = 0; i < k; ++i) dst[i] = src[f.rows[static_cast<std::size_t>(i)]];
  }
  f.mean = g.colwise().mean().transpose();
  g.rowwise() -= f.mean.transpose();
  // Lower triangle by a rank-k update (half the work of g'g), then mirrored.
  f.cov.setZero(p, p);
  f.cov.selfadjointView<Eigen::Lower>().rankUpdate(g.transpose());
  f.cov /= static_cast<double>(k);
  f.cov = f.cov.selfadjointView<Eigen::Lower>();
  bool regular = f.chol.compute(f.cov);
  // lambda_min >= 1 / trace(cov^-1) = 1 / |L^-1|_F^2 >= lambda_min / p: a cheap
  // lower bound clears most subsets; only doubtful ones pay for eigenvalues.
  if (regular) {
    f.linv = f.chol.lower().triangularView<Eigen::Lower>().solve(Eigen::MatrixXd::Identity(p, p));
    if (!(1.0 / f.linv.squaredNorm() > kExactFitEigenvalue)) {
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(f.cov, Eigen::EigenvaluesOnly);
      regular = es.eigenvalues()(0) > kExactFitEigenvalue;
    }
  }
  f.singular = !regular;
  f.log_det = regular ? f.chol.log_determinant() : -std::numeric_limits<double>::infinity();
  return f;
}

void subset_distances(const Eigen::MatrixXd& z, const SubsetFit& fit, Eigen::VectorXd& d2) {
  const Index n = z.rows();
  d2.resize(n);
  // Rows in chunks: centre, multiply by L^-T (one small GEMM per chunk), sum
  // squares. L^-1 of the p x p factor is the triangular inverse fit_subset
  // forms anyway for its exact-fit test.
  constexpr Index kChunk = 2048;
  const Eigen::MatrixXd linv_t = fit.linv.transpose();
  Eigen::MatrixXd c, y;
  for (Index s = 0; s < n; s += kChunk) {
    const Index m = std::min(kChunk, n - s);
    c = z.middleRows(s, m).rowwise() - fit.mean.transpose();
    y.noalias() = c * linv_t;  // plain GEMM: faster than a triangular product at small p
    d2.segment(s, m) = y.rowwise().squaredNorm();
  }
}

std::vector<Index> smallest_h(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z) {
  const Index n = d2.size();
  std::vector<double> v(d2.data(), d2.data() + n);
  std::nth_element(v.begin(), v.begin() + (h - 1), v.end());
  const double cut = v[static_cast<std::size_t>(h - 1)];
  // Rows strictly below the cut, collected without data-dependent branches
  // (about half the rows are taken, in no predictable pattern); v is reused.
  std::vector<Index> rows(static_cast<std::size_t>(n) + 1);
  std::size_t below = 0, at_cut = 0;
  for (Index i = 0; i < n; ++i) {
    rows[below] = i;
    below += d2(i) < cut;
    at_cut += d2(i) == cut;
  }
  rows.resize(below);
  const std::size_t need = static_cast<std::size_t>(h) - below;
  std::vector<Index> tied;
  tied.reserve(at_cut);
  for (Index i = 0; i < n; ++i)
    if (d2(i) == cut) tied.push_back(i);
  if (tied.size() > need) {
    // Ties at the cut are broken by the values of the rows, not by row order.
    std::sort(tied.begin(), tied.end(), [&z](Index a, Index b) {
      for (Index j = 0; j < z.cols(); ++j)
        if (z(a, j) != z(b, j)) return z(a, j) < z(b, j);
      return a < b;
    });
    tied.resize(need);
    std::sort(tied.begin(), tied.end());
  }
  const std::size_t mid = rows.size();
  rows.insert(rows.end(), tied.begin(), tied.end());
  std::inplace_merge(rows.begin(), rows.begin() + static_cast<std::ptrdiff_t>(mid), rows.end());
  return rows;
}

bool c_step(const Eigen::MatrixXd& z, Index h, SubsetFit& fit) {
  Eigen::VectorXd d2;
  subset_distances(z, fit, d2);
  std::vector<Index> rows = smallest_h(d2, h, z);
  if (rows == fit.rows) return false;
  SubsetFit next = fit_subset(z, std::move(rows));
  // The determinant cannot increase (Rousseeuw & Van Driessen 1999, Theorem 1);
  // a rise can only be rounding between equal-determinant subsets: stop there.
  // (Only comparable when the current subset has h rows too: starts are smaller.)
  if (!next.singular && static_cast<Index>(fit.rows.size()) == h && next.log_det > fit.log_det)
    return false;
  fit = std::move(next);
  return true;
}

int c_steps_to_convergence(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, int max_steps) {
  int steps = 0;
  while (steps < max_steps && !fit.singular) {
    ++steps;
    if (!c_step(z, h, fit)) break;
  }
  return steps;
}

std::optional<SubsetFit> exact_fit_subset(const Eigen::MatrixXd& z, const Eigen::MatrixXd& z_stage,
                                          const SubsetFit& singular_fit, Index h) {
  const Index p = z.cols();
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(singular_fit.cov);
  const Eigen::VectorXd a = es.eigenvectors().col(0);
  double tol = 1e-9 * std::sqrt(std::max(es.eigenvalues()(p - 1), 0.0));
  for (Index i : singular_fit.rows)
    tol = std::max(tol, std::abs((z_stage.row(i).transpose() - singular_fit.mean).dot(a)));
  const Eigen::VectorXd r2 = ((z.rowwise() - singular_fit.mean.transpose()) * a).array().square();
  if ((r2.array() <= tol * tol).count() < h) return std::nullopt;
  SubsetFit f = fit_subset(z, smallest_h(r2, h, z));
  if (!f.singular) return std::nullopt;  // h on the plane, but only within tolerance
  return f;
}

namespace {

Eigen::MatrixXd scale_both_sides(const Eigen::MatrixXd& m, const Eigen::VectorXd& d) {
  return d.asDiagonal() * m * d.asDiagonal();
}

}  // namespace

RobustFit finish_fit(DataView x, const Standardised& s, const SubsetFit& best, Index h, double level) {
  const Index n = x.rows(), p = x.cols();
  RobustFit r;
  r.h = h;
  r.h_subset = best.rows;
  r.reweight_level = level;
  r.consistency_factor = mcd_consistency_factor(h, n, p);
  r.reweight_factor = reweight_consistency_factor(level, p);
  r.raw_location = s.centre + s.scale.cwiseProduct(best.mean);
  r.raw_scatter = r.consistency_factor * scale_both_sides(best.cov, s.scale);
  r.raw_log_det = best.log_det + 2.0 * s.scale.array().log().sum();
  // Distances are affine invariant: compute them on the standardised data.
  const DataView zv = make_view(s.z);
  CholeskyFactor raw_chol;
  if (!raw_chol.compute(r.consistency_factor * best.cov))
    throw Error(ErrorKind::Singular, "MCD: raw scatter is not positive definite (internal error)");
  r.raw_d2 = raw_chol.squared_distances(zv, best.mean);
  const double cutoff = chi2_quantile(level, static_cast<double>(p));
  r.outlier.assign(static_cast<std::size_t>(n), false);
  Eigen::VectorXd w(n);
  for (Index i = 0; i < n; ++i) {
    const bool out = r.raw_d2(i) > cutoff;
    r.outlier[static_cast<std::size_t>(i)] = out;
    w(i) = out ? 0.0 : 1.0;
  }
  MomentAccumulator acc(p);
  acc.add(zv, w);
  CholeskyFactor chol;
  if (acc.rows() > p) {
    const Eigen::MatrixXd cov_z = r.reweight_factor * acc.covariance(Normalisation::ByCount);
    if (chol.compute(cov_z)) {
      r.reweighted = true;
      r.location = s.centre + s.scale.cwiseProduct(acc.mean());
      r.scatter = scale_both_sides(cov_z, s.scale);
      r.robust_d2 = chol.squared_distances(zv, acc.mean());
    }
  }
  if (!r.reweighted) {
    r.location = r.raw_location;
    r.scatter = r.raw_scatter;
    r.robust_d2 = r.raw_d2;
  }
  return r;
}

RobustFit exact_fit_result(DataView x, const Standardised& s, const SubsetFit& subset, Index h) {
  const Index n = x.rows(), p = x.cols();
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(subset.cov);
  const Eigen::VectorXd a = es.eigenvectors().col(0);
  const double lambda_max = std::max(es.eigenvalues()(p - 1), 0.0);
  // Residuals in standardised units, then the plane in original units:
  // a'(z - t) = (a./scale)'(x - T), so normal = (a./scale)/|a./scale|.
  Eigen::VectorXd rz = (s.z.rowwise() - subset.mean.transpose()) * a;
  double tol = 1e-9 * std::sqrt(lambda_max);
  for (Index i : subset.rows) tol = std::max(tol, std::abs(rz(i)));
  const Eigen::VectorXd g = a.cwiseQuotient(s.scale);
  const double gnorm = g.norm();

  RobustFit r;
  r.exact_fit = true;
  r.h = h;
  r.h_subset = subset.rows;
  r.raw_log_det = -std::numeric_limits<double>::infinity();
  r.raw_location = s.centre + s.scale.cwiseProduct(subset.mean);
  r.raw_scatter = scale_both_sides(subset.cov, s.scale);
  Hyperplane& hp = r.hyperplane;
  hp.normal = g / gnorm;
  hp.offset = hp.normal.dot(r.raw_location);
  hp.residual = rz / gnorm;
  hp.tolerance = tol / gnorm;
  r.outlier.assign(static_cast<std::size_t>(n), true);
  std::vector<Index> on;
  for (Index i = 0; i < n; ++i)
    if (std::abs(rz(i)) <= tol) {
      on.push_back(i);
      r.outlier[static_cast<std::size_t>(i)] = false;
    }
  hp.rows_on = static_cast<Index>(on.size());
  const SubsetFit all_on = fit_subset(s.z, on);
  r.location = s.centre + s.scale.cwiseProduct(all_on.mean);
  r.scatter = scale_both_sides(all_on.cov, s.scale);
  return r;
}

RobustFit constant_column_result(DataView x, const Standardised& s, Index h) {
  std::vector<Index> rows(static_cast<std::size_t>(h));
  for (Index i = 0; i < h; ++i) rows[static_cast<std::size_t>(i)] = i;
  SubsetFit f = fit_subset(s.z, std::move(rows));
  // Force the constant column's direction as the normal (other zero
  // eigenvalues could otherwise be picked in a doubly degenerate case).
  const Index j = s.constant_column;
  f.cov.row(j).setZero();
  f.cov.col(j).setZero();
  f.cov(j, j) = -1.0;  // smallest eigenvalue, eigenvector e_j
  RobustFit r = exact_fit_result(x, s, f, h);
  r.raw_scatter(j, j) = 0.0;
  return r;
}

}  // namespace mcd_detail
}  // namespace ellipsa::core
