#include "singularity.hpp"

#include <Eigen/Eigenvalues>
#include <cmath>
#include <cstdio>
#include <numeric>

#include "error.hpp"

namespace ellipsa::core {
namespace {

std::string list_columns(const std::vector<Index>& cols, Index base) {
  std::string out;
  for (std::size_t k = 0; k < cols.size(); ++k) {
    if (k) out += ", ";
    out += std::to_string(cols[k] + base);
  }
  return out;
}

std::string format_g(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3g", v);
  return buf;
}

// Connected components of the graph "i ~ j when |P_ij| is not negligible",
// restricted to the involved columns: independent dependencies (say columns 1,2
// and 3,4) give a block-diagonal projector and so separate groups.
std::vector<std::vector<Index>> components(const Eigen::MatrixXd& proj, const std::vector<Index>& involved,
                                           double threshold) {
  const std::size_t m = involved.size();
  std::vector<std::size_t> label(m);
  std::iota(label.begin(), label.end(), std::size_t{0});
  auto root = [&](std::size_t a) {
    while (label[a] != a) a = label[a] = label[label[a]];
    return a;
  };
  for (std::size_t a = 0; a < m; ++a)
    for (std::size_t b = a + 1; b < m; ++b)
      if (std::abs(proj(involved[a], involved[b])) > threshold) label[root(a)] = root(b);
  std::vector<std::vector<Index>> groups;
  std::vector<long> slot(m, -1);
  for (std::size_t a = 0; a < m; ++a) {
    const std::size_t r = root(a);
    if (slot[r] < 0) {
      slot[r] = static_cast<long>(groups.size());
      groups.emplace_back();
    }
    groups[static_cast<std::size_t>(slot[r])].push_back(involved[a]);
  }
  return groups;
}

}  // namespace

SingularityReport diagnose_scatter(const Eigen::MatrixXd& s, const SingularityOptions& options) {
  if (s.rows() != s.cols()) throw Error(ErrorKind::Shape, "singularity diagnosis: matrix is not square");
  if (!s.allFinite()) {
    // Fits reach here with finite data only, so a non-finite scatter is an
    // overflow: squares of values beyond about 1e154 (in size or in spread).
    for (Index j = 0; j < s.rows(); ++j)
      if (!std::isfinite(s(j, j)))
        throw LocatedError(ErrorKind::Data, "scatter", -1, j,
                           "has a variance that overflows double precision; rescale the data");
    throw Error(ErrorKind::Data, "scatter: a covariance overflows double precision; rescale the data");
  }
  if (!(options.relative_tolerance > 0.0 && options.relative_tolerance < 1.0))
    throw Error(ErrorKind::Argument, "singularity diagnosis: relative tolerance must lie in (0, 1)");
  if (!(options.loading_threshold > 0.0 && options.loading_threshold < 1.0))
    throw Error(ErrorKind::Argument, "singularity diagnosis: loading threshold must lie in (0, 1)");

  SingularityReport report;
  std::vector<Index> varying;
  for (Index j = 0; j < s.rows(); ++j) (s(j, j) > 0.0 ? varying : report.constant_columns).push_back(j);

  const Index q = static_cast<Index>(varying.size());
  if (q == 0) report.eigenvalue_ratio = 0.0;
  if (q >= 2) {
    // Correlation of the varying columns: scale-free, so the tolerance means the
    // same for columns measured in metres or in millimetres.
    Eigen::VectorXd inv_sd(q);
    for (Index a = 0; a < q; ++a) inv_sd(a) = 1.0 / std::sqrt(s(varying[a], varying[a]));
    Eigen::MatrixXd r(q, q);
    for (Index b = 0; b < q; ++b)
      for (Index a = 0; a < q; ++a) r(a, b) = s(varying[a], varying[b]) * inv_sd(a) * inv_sd(b);
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(r);  // eigenvalues ascending
    if (eig.info() != Eigen::Success)
      throw Error(ErrorKind::NotConverged, "singularity diagnosis: eigen-decomposition failed");
    const Eigen::VectorXd& lambda = eig.eigenvalues();
    const double largest = lambda(q - 1);
    report.eigenvalue_ratio = std::max(0.0, lambda(0)) / largest;
    Index k = 0;
    while (k < q && lambda(k) < options.relative_tolerance * largest) ++k;
    if (k > 0) {
      const Eigen::MatrixXd v = eig.eigenvectors().leftCols(k);
      const Eigen::MatrixXd proj = v * v.transpose();
      std::vector<Index> involved;  // positions within `varying`
      for (Index a = 0; a < q; ++a)
        if (proj(a, a) > options.loading_threshold) involved.push_back(a);
      for (auto& group : components(proj, involved, options.loading_threshold)) {
        CollinearGroup g;
        double dim = 0.0;  // trace of the projector on the group = directions inside it
        for (Index a : group) {
          g.columns.push_back(varying[a]);
          dim += proj(a, a);
        }
        g.dimension = std::max<Index>(1, static_cast<Index>(std::lround(dim)));
        report.collinear_groups.push_back(std::move(g));
      }
    }
  }

  report.singular = !report.constant_columns.empty() || !report.collinear_groups.empty();
  if (report.singular) {
    const std::string basis = options.index_base == 0 ? " (0-based)" : "";
    std::string msg = "scatter matrix is singular or nearly so:";
    if (!report.constant_columns.empty())
      msg += " constant column(s)" + basis + " " + list_columns(report.constant_columns, options.index_base) + ";";
    for (const auto& g : report.collinear_groups)
      msg += " columns" + basis + " " + list_columns(g.columns, options.index_base) + " are collinear (" +
             std::to_string(g.dimension) + " dependent direction(s));";
    if (!report.collinear_groups.empty())
      msg += " smallest/largest correlation eigenvalue " + format_g(report.eigenvalue_ratio) + " below tolerance " +
             format_g(options.relative_tolerance) + ";";
    msg += " remove these columns or use a shrinkage estimate";
    report.message = msg;
  }
  return report;
}

}  // namespace ellipsa::core
