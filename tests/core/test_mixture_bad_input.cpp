// Inputs the mixture fit refuses, each with a clear message and error kind.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "core/error.hpp"
#include "core/kmeans_seed.hpp"
#include "core/mixture_em.hpp"
#include "core/mixture_select.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd spread_rows(Index n, Index p, std::uint64_t seed) {
  PortableRandom rng(seed);
  Eigen::MatrixXd x(n, p);
  for (Index i = 0; i < n; ++i)
    for (Index j = 0; j < p; ++j) x(i, j) = rng.uniform() * 10.0 + static_cast<double>(i % 3) * 20.0;
  return x;
}

// Runs the fit and returns the error kind and message it throws.
std::pair<ErrorKind, std::string> failure(const Eigen::MatrixXd& x, const MixtureOptions& o) {
  try {
    fit_mixture(make_view(x), o);
  } catch (const Error& e) {
    return {e.kind(), e.what()};
  }
  ADD_FAILURE() << "no error thrown";
  return {ErrorKind::Format, ""};
}

MixtureOptions with_k(Index k, CovarianceStructure s = CovarianceStructure::Full) {
  MixtureOptions o;
  o.components = k;
  o.structure = s;
  return o;
}

}  // namespace

TEST(MixtureBadInput, ComponentCountOutOfRange) {
  const Eigen::MatrixXd x = spread_rows(30, 2, 1);
  EXPECT_EQ(failure(x, with_k(0)).first, ErrorKind::Argument);
  EXPECT_EQ(failure(x, with_k(-3)).first, ErrorKind::Argument);
  // More components than rows is a data condition (a model choice records it
  // as a failed candidate), not a misuse.
  const auto [kind, msg] = failure(x, with_k(31));
  EXPECT_EQ(kind, ErrorKind::Data);
  EXPECT_EQ(msg, "mixture: K = 31 exceeds the number of rows (30)");
  // A bad option is still reported as one, whatever K is.
  MixtureOptions o = with_k(31);
  o.restarts = 0;
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
}

TEST(MixtureBadInput, SelectionKeepsTheBestWhenLargeKCannotBeFitted) {
  // 12 rows in 2 columns, spherical: 4K - 1 free parameters, so K <= 3 can be
  // fitted, K = 4..12 have too few rows for their parameters and K = 13
  // exceeds the rows. The table keeps every candidate with its reason.
  const Eigen::MatrixXd x = spread_rows(12, 2, 11);
  MixtureSelectionOptions so;
  so.k_min = 1;
  so.k_max = 13;
  so.structures = {CovarianceStructure::Spherical};
  const MixtureSelection sel = select_mixture(make_view(x), so);
  ASSERT_EQ(sel.table.size(), 13u);
  ASSERT_GE(sel.winner, 0);
  EXPECT_TRUE(sel.table[static_cast<std::size_t>(sel.winner)].fitted);
  EXPECT_LE(sel.table[static_cast<std::size_t>(sel.winner)].k, 3);
  EXPECT_TRUE(sel.table[0].fitted) << sel.table[0].message;
  EXPECT_TRUE(sel.table[0].message.empty());
  for (std::size_t i = 3; i < 12; ++i) {
    EXPECT_FALSE(sel.table[i].fitted) << "K = " << sel.table[i].k;
    EXPECT_NE(sel.table[i].message.find("free parameters"), std::string::npos) << sel.table[i].message;
    EXPECT_TRUE(std::isnan(sel.table[i].bic));
  }
  EXPECT_FALSE(sel.table[12].fitted);
  EXPECT_EQ(sel.table[12].message, "mixture: K = 13 exceeds the number of rows (12)");
  // Spherical, K = 4, p = 2: 3 weights + 8 means + 4 variances = 15 (parameter
  // count of the structure, common practice).
  EXPECT_NE(sel.table[3].message.find("fewer than the 15 free parameters"), std::string::npos) << sel.table[3].message;

  // Only when no K can be fitted does the selection fail, with the first reason.
  so.k_min = 13;
  so.k_max = 14;
  try {
    select_mixture(make_view(x), so);
    ADD_FAILURE() << "no candidate fits, yet no error";
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Data);
    EXPECT_EQ(std::string(e.what()),
              "mixture selection: no candidate could be fitted (mixture: K = 13 exceeds the number of rows (12))");
  }
}

TEST(MixtureBadInput, FewerRowsThanParameters) {
  const Eigen::MatrixXd x = spread_rows(20, 4, 2);
  // Full, K = 2, p = 4: 1 + 8 + 20 = 29 parameters > 20 rows.
  const auto [kind, msg] = failure(x, with_k(2));
  EXPECT_EQ(kind, ErrorKind::Data);
  EXPECT_NE(msg.find("29 free parameters"), std::string::npos) << msg;
  // Spherical, K = 2: 1 + 8 + 2 = 11 parameters: fits.
  EXPECT_NO_THROW(fit_mixture(make_view(x), with_k(2, CovarianceStructure::Spherical)));
  // Dropping incomplete rows can leave too few.
  Eigen::MatrixXd y = spread_rows(30, 2, 3);
  for (Index i = 0; i < 25; ++i) y(i, 1) = std::numeric_limits<double>::quiet_NaN();
  EXPECT_EQ(failure(y, with_k(2)).first, ErrorKind::Data);
}

TEST(MixtureBadInput, ConstantColumnsNamed) {
  Eigen::MatrixXd x = spread_rows(60, 4, 4);
  x.col(2).setConstant(7.5);
  for (CovarianceStructure s : {CovarianceStructure::Full, CovarianceStructure::Tied}) {
    const auto [kind, msg] = failure(x, with_k(2, s));
    EXPECT_EQ(kind, ErrorKind::Data);
    EXPECT_NE(msg.find("constant column(s) 2"), std::string::npos) << msg;
  }
  // Decision: diagonal and spherical are rescued by a positive regularisation.
  for (CovarianceStructure s : {CovarianceStructure::Diagonal, CovarianceStructure::Spherical}) {
    EXPECT_NO_THROW(fit_mixture(make_view(x), with_k(2, s)));
    MixtureOptions o = with_k(2, s);
    o.regularisation = 0.0;
    EXPECT_EQ(failure(x, o).first, ErrorKind::Data);
  }
}

TEST(MixtureBadInput, DuplicateRowsOnly) {
  Eigen::MatrixXd x(40, 3);
  x.rowwise() = Eigen::RowVector3d(1.0, -2.0, 3.0);
  const auto [kind, msg] = failure(x, with_k(2, CovarianceStructure::Spherical));
  EXPECT_EQ(kind, ErrorKind::Data);
  EXPECT_NE(msg.find("identical"), std::string::npos) << msg;
  // Two distinct rows repeated cannot hold three components.
  for (Index i = 0; i < 40; i += 2) x.row(i) = Eigen::RowVector3d(5.0, 1.0, 0.0);
  const auto [kind3, msg3] = failure(x, with_k(3, CovarianceStructure::Spherical));
  EXPECT_EQ(kind3, ErrorKind::Data);
  EXPECT_NE(msg3.find("distinct"), std::string::npos) << msg3;
}

TEST(MixtureBadInput, AllMissingRowsAndInfinities) {
  Eigen::MatrixXd x = spread_rows(50, 3, 5);
  x.row(7).setConstant(std::numeric_limits<double>::quiet_NaN());
  MixtureOptions o = with_k(2);
  o.missing = MissingHandling::EmOverMissing;
  const auto [kind, msg] = failure(x, o);
  EXPECT_EQ(kind, ErrorKind::Data);
  EXPECT_NE(msg.find("row 7"), std::string::npos) << msg;
  // Complete-row mode drops it like any incomplete row.
  const MixtureResult r = fit_mixture(make_view(x), with_k(2));
  EXPECT_EQ(r.rows_dropped, 1);
  // Infinite values are data errors in both modes, whatever their sign.
  for (double inf : {std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity()}) {
    Eigen::MatrixXd y = spread_rows(50, 3, 6);
    y(12, 1) = inf;
    const auto [k2, m2] = failure(y, with_k(2));
    EXPECT_EQ(k2, ErrorKind::Data);
    EXPECT_NE(m2.find("row 12, column 1"), std::string::npos) << m2;
  }
}

TEST(MixtureBadInput, BadOptions) {
  const Eigen::MatrixXd x = spread_rows(40, 2, 7);
  MixtureOptions o = with_k(2);
  o.regularisation = -1e-6;
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  o = with_k(2);
  o.tolerance = std::numeric_limits<double>::quiet_NaN();
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  o = with_k(2);
  o.short_run_tolerance = -0.1;
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  o.short_run_tolerance = std::numeric_limits<double>::infinity();
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  o = with_k(2);
  o.initial_labels = Eigen::VectorXi::Constant(40, 2);
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  o = with_k(2);
  o.initial_labels = Eigen::VectorXi::Zero(39);
  EXPECT_EQ(failure(x, o).first, ErrorKind::Shape);
  o = with_k(2);
  o.initial_responsibilities = Eigen::MatrixXd::Zero(40, 2);
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  o = with_k(2);
  o.restarts = 0;
  EXPECT_EQ(failure(x, o).first, ErrorKind::Argument);
  Eigen::MatrixXd none(40, 0);
  EXPECT_EQ(failure(none, with_k(2)).first, ErrorKind::Shape);
}

TEST(MixtureBadInput, ProgressCanCancel) {
  const Eigen::MatrixXd x = spread_rows(200, 2, 8);
  MixtureOptions o = with_k(3);
  double last = -1.0;
  bool monotone = true;
  o.progress = [&](const char*, double f) {
    monotone &= f >= last && f <= 1.0;
    last = f;
    return true;
  };
  fit_mixture(make_view(x), o);
  EXPECT_TRUE(monotone);
  EXPECT_DOUBLE_EQ(last, 1.0);
  int calls = 0;
  o.progress = [&](const char*, double) { return ++calls < 4; };
  EXPECT_EQ(failure(x, o).first, ErrorKind::Cancelled);
  // Selection passes a cancel through instead of recording it as a failed candidate.
  MixtureSelectionOptions so;
  so.k_max = 3;
  so.fit.progress = [](const char*, double) { return false; };
  try {
    select_mixture(make_view(x), so);
    ADD_FAILURE() << "selection not cancelled";
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Cancelled);
  }
}
