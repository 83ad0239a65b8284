// Comparison of a new batch with a reference (core/batch_compare): the
// classical tests through the data path against base R, the robust mean test,
// and the edge cases (NaN rows, constant columns, too few rows, offsets 1e9).
#include <gtest/gtest.h>

#include <Eigen/Cholesky>

#include <cmath>
#include <cstdio>
#include <limits>
#include <random>
#include <string>

#include "core/batch_compare.hpp"
#include "core/error.hpp"
#include "reference_csv.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd iris_species(int k) { return ellipsa_test::iris_species(ELLIPSA_REFERENCE_DIR, k); }

Eigen::MatrixXd normal_rows(Eigen::Index n, Eigen::Index p, std::uint64_t seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> z;  // test data only; no result depends on the generator's algorithm
  Eigen::MatrixXd x(n, p);
  for (Eigen::Index i = 0; i < x.size(); ++i) x.data()[i] = z(gen);
  return x;
}

CompareOptions classical_only() {
  CompareOptions o;
  o.robust = false;
  return o;
}

// T^2 of two samples by a two-pass long double computation with its own
// Cholesky factorisation: independent of core/moments and core/cholesky.
double t2_long_double(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  const Eigen::Index p = a.cols();
  using V = Eigen::Matrix<long double, Eigen::Dynamic, 1>;
  using M = Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic>;
  auto mean = [&](const Eigen::MatrixXd& x) {
    V m = V::Zero(p);
    for (Eigen::Index i = 0; i < x.rows(); ++i) m += x.row(i).transpose().cast<long double>();
    return V(m / static_cast<long double>(x.rows()));
  };
  const V ma = mean(a), mb = mean(b);
  M s = M::Zero(p, p);
  for (const auto* x : {&a, &b}) {
    const V& m = x == &a ? ma : mb;
    for (Eigen::Index i = 0; i < x->rows(); ++i) {
      const V d = x->row(i).transpose().cast<long double>() - m;
      s += d * d.transpose();
    }
  }
  s /= static_cast<long double>(a.rows() + b.rows() - 2);
  const V d = mb - ma;
  const V w = s.llt().solve(d);
  const long double n1 = a.rows(), n2 = b.rows();
  return static_cast<double>(n1 * n2 / (n1 + n2) * d.dot(w));
}

}  // namespace

TEST(BatchCompare, IrisVersicolorAgainstVirginicaThroughTheDataPath) {
  // Same values as tests/core/test_two_sample_tests.cpp (base R 4.x on the iris data).
  const BatchComparison c = compare_batches(make_view(iris_species(1)), make_view(iris_species(2)), classical_only());
  ASSERT_TRUE(c.mean_shift.value);
  EXPECT_NEAR(c.mean_shift.value->t2, 355.472145199055, 1e-9);
  ASSERT_TRUE(c.covariance_change.value);
  EXPECT_NEAR(c.covariance_change.value->chi2, 35.0366440964854, 1e-9);
  EXPECT_FALSE(c.robust_mean_shift.value);
  EXPECT_EQ(c.robust_mean_shift.kind, ErrorKind::Argument);
  ASSERT_EQ(c.variables.size(), 4u);
  // base R: t.test(virginica$Petal.Length, versicolor$Petal.Length); mean(versicolor$Petal.Length) = 4.260
  EXPECT_NEAR(c.variables[2].welch.t, 12.6037794413850, 1e-10);
  EXPECT_NEAR(c.variables[2].reference_mean, 4.260, 1e-12);  // Fisher (1936) per-species means, widely printed
  EXPECT_NEAR(c.variables[2].p_holm / 1.47008625821948e-21, 1.0, 1e-7);
  EXPECT_NEAR(c.variables[0].shift_in_sd, (6.588 - 5.936) / c.variables[0].reference_sd, 1e-12);
  EXPECT_EQ(c.reference_rows, 50);
  EXPECT_EQ(c.batch_dropped, 0);
}

TEST(BatchCompare, RandomSizesAgreeWithLongDoubleTwoPass) {
  std::mt19937_64 gen(2026);
  for (int rep = 0; rep < 15; ++rep) {
    const Eigen::Index p = 1 + static_cast<Eigen::Index>(gen() % 5);
    const Eigen::Index n1 = 3 + static_cast<Eigen::Index>(gen() % 60),
                       n2 = p + 2 + static_cast<Eigen::Index>(gen() % 60);
    const Eigen::MatrixXd a = normal_rows(n1, p, gen()), b = normal_rows(n2, p, gen()).array() + 0.3;
    const BatchComparison c = compare_batches(make_view(a), make_view(b), classical_only());
    ASSERT_TRUE(c.mean_shift.value) << c.mean_shift.reason;
    const double ref = t2_long_double(a, b);
    EXPECT_NEAR(c.mean_shift.value->t2, ref, 1e-10 * (1.0 + ref)) << "n1 " << n1 << " n2 " << n2 << " p " << p;
  }
}

TEST(BatchCompare, HugeOffsetKeepsItsDigits) {
  // Values near 1e9 with unit spread: a one-pass or absolute-mean computation
  // loses about 9 digits of the mean difference (METHODS.md section 1 trap).
  Eigen::MatrixXd a = normal_rows(40, 3, 7), b = normal_rows(30, 3, 8);
  b.col(1).array() += 0.5;
  a.array() += 1e9;
  b.array() += 1e9;
  const BatchComparison c = compare_batches(make_view(a), make_view(b), classical_only());
  ASSERT_TRUE(c.mean_shift.value);
  const double ref = t2_long_double(a, b);
  EXPECT_NEAR(c.mean_shift.value->t2, ref, 1e-8 * ref);
  // The same data moved back to the origin (exact subtraction): same statistics.
  const Eigen::MatrixXd a0 = a.array() - 1e9, b0 = b.array() - 1e9;
  const BatchComparison d = compare_batches(make_view(a0), make_view(b0), classical_only());
  EXPECT_NEAR(c.mean_shift.value->t2, d.mean_shift.value->t2, 1e-8 * d.mean_shift.value->t2);
  EXPECT_NEAR(c.covariance_change.value->m, d.covariance_change.value->m, 1e-7 * (1.0 + d.covariance_change.value->m));
  for (int j = 0; j < 3; ++j)
    EXPECT_NEAR(c.variables[j].welch.t, d.variables[j].welch.t, 1e-8 * (1.0 + std::abs(d.variables[j].welch.t)));
  EXPECT_NEAR(c.variables[1].reference_mean - 1e9, d.variables[1].reference_mean, 1e-6);
}

TEST(BatchCompare, RowsWithNaNAreLeftOutAndCounted) {
  Eigen::MatrixXd a = normal_rows(30, 2, 11), b = normal_rows(25, 2, 12);
  Eigen::MatrixXd a_nan(32, 2);
  a_nan << a.topRows(10), Eigen::RowVector2d(std::nan(""), 1.0), a.bottomRows(20),
      Eigen::RowVector2d(2.0, std::nan(""));
  const BatchComparison c = compare_batches(make_view(a_nan), make_view(b), classical_only());
  const BatchComparison d = compare_batches(make_view(a), make_view(b), classical_only());
  EXPECT_EQ(c.reference_rows, 30);
  EXPECT_EQ(c.reference_dropped, 2);
  EXPECT_NEAR(c.mean_shift.value->t2, d.mean_shift.value->t2, 1e-12 * (1.0 + d.mean_shift.value->t2));
  Eigen::MatrixXd inf = b;
  inf(3, 1) = std::numeric_limits<double>::infinity();
  EXPECT_THROW(compare_batches(make_view(a), make_view(inf), classical_only()), Error);
}

TEST(BatchCompare, ConstantColumnsAreReportedPerTest) {
  Eigen::MatrixXd a = normal_rows(30, 3, 21), b = normal_rows(25, 3, 22);
  // Constant in the new batch only (a stuck sensor): T^2 still works, Box's M cannot.
  Eigen::MatrixXd stuck = b;
  stuck.col(2).setConstant(0.25);
  const BatchComparison c = compare_batches(make_view(a), make_view(stuck), classical_only());
  EXPECT_TRUE(c.mean_shift.value);
  EXPECT_FALSE(c.covariance_change.value);
  EXPECT_EQ(c.covariance_change.kind, ErrorKind::Singular);
  EXPECT_NE(c.covariance_change.reason.find("group 2"), std::string::npos) << c.covariance_change.reason;
  EXPECT_EQ(c.variables[2].batch_sd, 0.0);
  EXPECT_FALSE(std::isnan(c.variables[2].welch.p_value));
  // Constant in both: no T^2 either, and no Welch test for that column.
  Eigen::MatrixXd flat = a;
  flat.col(2).setConstant(0.25);
  const BatchComparison d = compare_batches(make_view(flat), make_view(stuck), classical_only());
  EXPECT_FALSE(d.mean_shift.value);
  EXPECT_EQ(d.mean_shift.kind, ErrorKind::Singular);
  EXPECT_NE(d.mean_shift.reason.find("column 3"), std::string::npos) << d.mean_shift.reason;
  EXPECT_TRUE(std::isnan(d.variables[2].welch.p_value));
  EXPECT_TRUE(std::isnan(d.variables[2].p_holm));
  EXPECT_TRUE(std::isnan(d.variables[2].shift_in_sd));  // 0 / 0
  EXPECT_FALSE(std::isnan(d.variables[0].p_holm));
}

TEST(BatchCompare, TooFewRows) {
  const Eigen::MatrixXd a = normal_rows(30, 4, 31), one = normal_rows(1, 4, 32), two = normal_rows(2, 4, 33);
  EXPECT_THROW(compare_batches(make_view(a), make_view(one), classical_only()), Error);
  // Two rows in the new batch: T^2 works (30 + 2 >= p + 2), Box's M needs p + 1 rows per batch.
  const BatchComparison c = compare_batches(make_view(a), make_view(two), classical_only());
  EXPECT_TRUE(c.mean_shift.value);
  EXPECT_EQ(c.covariance_change.kind, ErrorKind::Data);
  const Eigen::MatrixXd wide = normal_rows(2, 5, 34);
  const BatchComparison w = compare_batches(make_view(wide), make_view(wide), classical_only());
  EXPECT_FALSE(w.mean_shift.value);  // 2 + 2 < p + 2
  EXPECT_EQ(w.mean_shift.kind, ErrorKind::Data);
  const Eigen::MatrixXd other = normal_rows(30, 3, 35);
  EXPECT_THROW(compare_batches(make_view(a), make_view(other)), Error);
  CompareOptions bad;
  bad.alpha = 0.4;
  EXPECT_THROW(compare_batches(make_view(a), make_view(a), bad), Error);
}

TEST(BatchCompare, RobustMeanTestIgnoresAFewGrossRowsThatMoveTheClassicalOne) {
  // 60 + 60 rows from one normal law; 8 rows of the new batch replaced by gross
  // errors 12 sd away. The bulk has not moved: the classical T^2 says it has
  // (p = 0.014 on these seeded data: the gross rows also inflate the pooled
  // covariance), the robust one (DetMCD, relabelling p-value) does not.
  const Eigen::MatrixXd a = normal_rows(60, 3, 41);
  Eigen::MatrixXd b = normal_rows(60, 3, 42);
  b.topRows(8).array() += 12.0;
  CompareOptions o;
  o.permutations = 39;
  o.seed = 5;
  const BatchComparison c = compare_batches(make_view(a), make_view(b), o);
  ASSERT_TRUE(c.mean_shift.value);
  EXPECT_LT(c.mean_shift.value->p_value, 0.05);
  ASSERT_TRUE(c.robust_mean_shift.value) << c.robust_mean_shift.reason;
  const RobustMeanShift& r = *c.robust_mean_shift.value;
  EXPECT_GT(r.p_value, 0.05);
  EXPECT_EQ(r.permutations_used + r.permutations_failed, 39);
  // A real shift of the bulk (1.5 sd in every variable) is found by both; with
  // 39 relabellings the smallest possible p-value is 1/40.
  Eigen::MatrixXd moved = normal_rows(60, 3, 43).array() + 1.5;
  const BatchComparison m = compare_batches(make_view(a), make_view(moved), o);
  ASSERT_TRUE(m.robust_mean_shift.value);
  EXPECT_DOUBLE_EQ(m.robust_mean_shift.value->p_value, 1.0 / 40.0);
  // Same seed, same answer.
  const BatchComparison again = compare_batches(make_view(a), make_view(b), o);
  EXPECT_EQ(again.robust_mean_shift.value->p_value, r.p_value);
  EXPECT_EQ(again.robust_mean_shift.value->t2, r.t2);
}

TEST(BatchCompare, RobustTestWithoutRelabellingsAndWithTooFewRows) {
  const Eigen::MatrixXd a = normal_rows(40, 2, 51), b = normal_rows(30, 2, 52);
  CompareOptions o;
  o.permutations = 0;
  const BatchComparison c = compare_batches(make_view(a), make_view(b), o);
  ASSERT_TRUE(c.robust_mean_shift.value);
  EXPECT_TRUE(std::isnan(c.robust_mean_shift.value->p_value));
  EXPECT_GT(c.robust_mean_shift.value->t2, 0.0);
  const Eigen::MatrixXd two = normal_rows(2, 2, 53);
  const BatchComparison d = compare_batches(make_view(a), make_view(two), o);
  EXPECT_FALSE(d.robust_mean_shift.value);  // DetMCD needs n > p rows
  EXPECT_EQ(d.robust_mean_shift.kind, ErrorKind::Data);
}

TEST(BatchCompare, CancelledByProgress) {
  const Eigen::MatrixXd a = normal_rows(40, 2, 61), b = normal_rows(30, 2, 62);
  CompareOptions o;
  o.permutations = 50;
  int calls = 0;
  o.progress = [&](const char*, double) { return ++calls < 5; };
  EXPECT_THROW(compare_batches(make_view(a), make_view(b), o), Error);
  EXPECT_EQ(calls, 5);
}

TEST(BatchCompare, FalseAlarmRatesOnUnchangedNormalBatchesAreNearTheLevel) {
  // Seeded simulation: both batches from one normal law (n1 = 30, n2 = 25,
  // p = 3). Each test's p-value should fall below 0.05 in about 5% of the
  // 200 replicates (binomial sd 1.5%): accepted 1% to 10%. The robust test
  // (19 relabellings, p in multiples of 1/20) rejects with probability
  // exactly 1/20 when the rows are exchangeable (permutation argument), so
  // it gets the same band. Seen here: T^2 14/200, Box 11/200, Holm 12/200, robust 3/100.
  int t2 = 0, box = 0, welch_any = 0, robust = 0;
  const int reps = 200;
  CompareOptions o;
  o.permutations = 19;
  for (int rep = 0; rep < reps; ++rep) {
    o.seed = static_cast<std::uint64_t>(rep);
    o.robust = rep < 100;  // the robust test on half of them, to keep the run short
    const BatchComparison c =
        compare_batches(make_view(normal_rows(30, 3, 7000 + rep)), make_view(normal_rows(25, 3, 9000 + rep)), o);
    t2 += c.mean_shift.value->p_value < 0.05;
    box += c.covariance_change.value->p_value < 0.05;
    bool any = false;
    for (const auto& v : c.variables) any = any || v.p_holm < 0.05;  // Holm: family-wise level
    welch_any += any;
    if (o.robust) robust += c.robust_mean_shift.value->p_value <= 0.05;
  }
  EXPECT_GE(t2, 2);
  EXPECT_LE(t2, 20);
  EXPECT_GE(box, 2);
  EXPECT_LE(box, 20);
  EXPECT_LE(welch_any, 20);  // Holm keeps the family-wise rate near the level (Welch df approximate); 12/200 here
  EXPECT_LE(robust, 10);     // 100 replicates
  RecordProperty("rejections_t2_box_holm_robust", std::to_string(t2) + " " + std::to_string(box) + " " +
                                                      std::to_string(welch_any) + " " + std::to_string(robust));
  std::printf("rejections at 0.05: T^2 %d/200, Box's M %d/200, any Holm %d/200, robust %d/100\n", t2, box, welch_any,
              robust);
}
