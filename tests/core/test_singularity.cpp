// Singularity diagnosis (core/singularity): constant columns and collinear
// groups are named; a healthy scatter is not reported.
#include <gtest/gtest.h>

#include <algorithm>
#include <random>

#include "core/error.hpp"
#include "core/singularity.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd gaussian(std::mt19937_64& rng, Index r, Index c) {
  std::normal_distribution<double> g;
  Eigen::MatrixXd m(r, c);
  for (Index j = 0; j < c; ++j)
    for (Index i = 0; i < r; ++i) m(i, j) = g(rng);
  return m;
}

Eigen::MatrixXd covariance(const Eigen::MatrixXd& x) {
  const Eigen::MatrixXd c = x.rowwise() - x.colwise().mean();
  return c.transpose() * c / static_cast<double>(x.rows() - 1);
}

}  // namespace

TEST(Singularity, HealthyScatterIsNotReported) {
  std::mt19937_64 rng(501);
  const SingularityReport r = diagnose_scatter(covariance(gaussian(rng, 100, 6)));
  EXPECT_FALSE(r.singular);
  EXPECT_TRUE(r.message.empty());
  EXPECT_GT(r.eigenvalue_ratio, 0.1);
}

TEST(Singularity, ConstantAndCollinearColumnsAreNamed) {
  std::mt19937_64 rng(502);
  const Eigen::MatrixXd z = gaussian(rng, 200, 5);
  Eigen::MatrixXd x(200, 8);
  // 0..4 free; 5 = 2*c1 - 0.5*c3 + 1e3 (collinear with 1 and 3); 6 constant;
  // 7 = c0 - 4*c4 (collinear with 0 and 4).
  x.leftCols(5) = z;
  x.col(5) = (2.0 * z.col(1) - 0.5 * z.col(3)).array() + 1e3;
  x.col(6).setConstant(3.5);
  x.col(7) = z.col(0) - 4.0 * z.col(4);
  const SingularityReport r = diagnose_scatter(covariance(x));
  EXPECT_TRUE(r.singular);
  EXPECT_EQ(r.constant_columns, std::vector<Index>{6});
  ASSERT_EQ(r.collinear_groups.size(), 2u);
  std::vector<std::vector<Index>> groups;
  for (const auto& g : r.collinear_groups) {
    groups.push_back(g.columns);
    EXPECT_EQ(g.dimension, 1);
  }
  std::sort(groups.begin(), groups.end());
  EXPECT_EQ(groups[0], (std::vector<Index>{0, 4, 7}));
  EXPECT_EQ(groups[1], (std::vector<Index>{1, 3, 5}));
  EXPECT_LT(r.eigenvalue_ratio, 1e-10);
  EXPECT_NE(r.message.find("constant column(s) (0-based) 6"), std::string::npos) << r.message;
  EXPECT_NE(r.message.find("shrinkage"), std::string::npos);
  // 1-based numbering for a user-facing message.
  SingularityOptions one;
  one.index_base = 1;
  const SingularityReport r1 = diagnose_scatter(covariance(x), one);
  EXPECT_NE(r1.message.find("constant column(s) 7"), std::string::npos) << r1.message;
}

TEST(Singularity, NearCollinearityAgainstTheTolerance) {
  std::mt19937_64 rng(503);
  const Eigen::MatrixXd z = gaussian(rng, 500, 3);
  Eigen::MatrixXd x(500, 4);
  x.leftCols(3) = z;
  // Column 3 = column 0 + noise of relative size 1e-7: correlation eigenvalue
  // about 1e-14, below the default tolerance 1e-10.
  x.col(3) = z.col(0) + 1e-7 * gaussian(rng, 500, 1);
  SingularityReport r = diagnose_scatter(covariance(x));
  ASSERT_EQ(r.collinear_groups.size(), 1u);
  EXPECT_EQ(r.collinear_groups[0].columns, (std::vector<Index>{0, 3}));
  // With noise 1e-3 (eigenvalue about 1e-6) it is not reported at 1e-10, but is
  // at a looser tolerance.
  x.col(3) = z.col(0) + 1e-3 * gaussian(rng, 500, 1);
  r = diagnose_scatter(covariance(x));
  EXPECT_FALSE(r.singular);
  SingularityOptions loose;
  loose.relative_tolerance = 1e-4;
  r = diagnose_scatter(covariance(x), loose);
  EXPECT_TRUE(r.singular);
  ASSERT_EQ(r.collinear_groups.size(), 1u);
  EXPECT_EQ(r.collinear_groups[0].columns, (std::vector<Index>{0, 3}));
}

TEST(Singularity, FewerRowsThanColumnsAndErrors) {
  std::mt19937_64 rng(504);
  const SingularityReport r = diagnose_scatter(covariance(gaussian(rng, 4, 6)));  // rank 3 of 6
  EXPECT_TRUE(r.singular);
  ASSERT_EQ(r.collinear_groups.size(), 1u);
  EXPECT_EQ(r.collinear_groups[0].dimension, 3);
  EXPECT_EQ(r.collinear_groups[0].columns.size(), 6u);
  // Every column constant.
  const SingularityReport all = diagnose_scatter(Eigen::MatrixXd::Zero(3, 3));
  EXPECT_EQ(all.constant_columns.size(), 3u);
  EXPECT_EQ(all.eigenvalue_ratio, 0.0);
  EXPECT_THROW(diagnose_scatter(Eigen::MatrixXd::Zero(2, 3)), Error);
  Eigen::MatrixXd nan = Eigen::MatrixXd::Identity(2, 2);
  nan(0, 1) = std::nan("");
  EXPECT_THROW(diagnose_scatter(nan), Error);
  SingularityOptions bad;
  bad.relative_tolerance = 0.0;
  EXPECT_THROW(diagnose_scatter(Eigen::MatrixXd::Identity(2, 2), bad), Error);
}
