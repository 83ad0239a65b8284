#include "kmeans_seed.hpp"

#include <string>

#include "error.hpp"

namespace ellipsa::core {

namespace {

// Squared Euclidean distance of every row of z to centre c, summed over the
// columns in order. Column by column: z is column-major, and a row-wise
// reduction strides across it (measured: a sixth of a five-start fit of
// 1e5 x 10 with K = 8 went to this line when it was written row by row).
void squared_distance_to(const Eigen::MatrixXd& z, const Eigen::RowVectorXd& c, Eigen::VectorXd& out) {
  out = (z.col(0).array() - c(0)).square().matrix();
  for (Index j = 1; j < z.cols(); ++j) out.array() += (z.col(j).array() - c(j)).square();
}

// Index of the row whose running sum of weights first exceeds target.
Index draw_proportional(const Eigen::VectorXd& weight, double target) {
  double run = 0.0;
  Index last_positive = -1;
  for (Index i = 0; i < weight.size(); ++i) {
    if (weight(i) > 0.0) {
      run += weight(i);
      last_positive = i;
      if (run > target) return i;
    }
  }
  return last_positive;  // rounding in the running sum
}

}  // namespace

KMeansStart kmeans_seed(DataView x, Index k, int lloyd_steps, PortableRandom& rng) {
  const Index n = x.rows();
  const Index p = x.cols();
  if (k < 1 || k > n) throw Error(ErrorKind::Argument, "k-means seeding: the number of centres must be in [1, rows]");

  // Work on columns scaled to unit spread.
  const Eigen::RowVectorXd centre_of_mass = x.colwise().mean();
  Eigen::MatrixXd z = x.rowwise() - centre_of_mass;
  Eigen::RowVectorXd scale = (z.colwise().squaredNorm() / static_cast<double>(n)).cwiseSqrt();
  for (Index j = 0; j < p; ++j)
    if (!(scale(j) > 0.0)) scale(j) = 1.0;
  z.array().rowwise() /= scale.array();

  // Arthur & Vassilvitskii (2007), "k-means++: the advantages of careful seeding".
  Eigen::MatrixXd centres(k, p);
  Eigen::VectorXd nearest(n), d2(n);
  centres.row(0) = z.row(static_cast<Index>(rng.below(static_cast<std::uint64_t>(n))));
  squared_distance_to(z, centres.row(0), nearest);
  for (Index c = 1; c < k; ++c) {
    const double total = nearest.sum();
    if (!(total > 0.0))
      throw Error(ErrorKind::Data, "the data hold only " + std::to_string(c) + " distinct row(s), fewer than the " +
                                       std::to_string(k) + " components asked for");
    const Index pick = draw_proportional(nearest, rng.uniform() * total);
    centres.row(c) = z.row(pick);
    squared_distance_to(z, centres.row(c), d2);
    nearest = nearest.cwiseMin(d2);
  }

  // Lloyd steps on the scaled data.
  Eigen::VectorXi labels(n);
  Eigen::VectorXi fresh(n);
  auto assign = [&]() {
    for (Index c = 0; c < k; ++c) {
      squared_distance_to(z, centres.row(c), d2);
      for (Index i = 0; i < n; ++i) {
        if (c == 0 || d2(i) < nearest(i)) {  // ties go to the lower index
          nearest(i) = d2(i);
          fresh(i) = static_cast<int>(c);
        }
      }
    }
    const bool changed = (fresh.array() != labels.array()).any();
    labels = fresh;
    return changed;
  };
  labels.setConstant(-1);
  assign();
  for (int step = 0; step < lloyd_steps; ++step) {
    Eigen::MatrixXd sums = Eigen::MatrixXd::Zero(k, p);
    Eigen::VectorXd counts = Eigen::VectorXd::Zero(k);
    for (Index i = 0; i < n; ++i) {
      sums.row(labels(i)) += z.row(i);
      counts(labels(i)) += 1.0;
    }
    for (Index c = 0; c < k; ++c)
      if (counts(c) > 0.0) centres.row(c) = sums.row(c) / counts(c);
    if (!assign()) break;
  }

  // Centres back in the units of the data: the mean of each cluster's rows, or the
  // unscaled seed when a cluster is empty.
  KMeansStart out;
  out.labels = labels;
  out.centres = (centres.array().rowwise() * scale.array()).matrix().rowwise() + centre_of_mass;
  Eigen::MatrixXd sums = Eigen::MatrixXd::Zero(k, p);
  Eigen::VectorXd counts = Eigen::VectorXd::Zero(k);
  for (Index i = 0; i < n; ++i) {
    sums.row(labels(i)) += x.row(i);
    counts(labels(i)) += 1.0;
  }
  for (Index c = 0; c < k; ++c)
    if (counts(c) > 0.0) out.centres.row(c) = sums.row(c) / counts(c);
  return out;
}

}  // namespace ellipsa::core
