#include "batch_compare.hpp"

#include <cmath>
#include <limits>
#include <numeric>
#include <string>
#include <utility>

#include "kmeans_seed.hpp"
#include "mcd_deterministic.hpp"
#include "missing.hpp"
#include "moments.hpp"

namespace ellipsa::core {
namespace {

void check_options(const CompareOptions& o) {
  if (!(o.alpha >= 0.5 && o.alpha <= 1.0)) throw Error(ErrorKind::Argument, "compare: alpha must lie in [0.5, 1]");
  if (!(o.reweight_level > 0.0 && o.reweight_level < 1.0))
    throw Error(ErrorKind::Argument, "compare: the reweighting level must lie in (0, 1)");
  if (o.permutations < 0 || o.permutations > 100000)
    throw Error(ErrorKind::Argument, "compare: permutations must lie in [0, 100000]");
}

// Complete rows of one batch, dense.
// A located problem (an infinite cell) carries the matrix's name as its
// context ("reference" or "batch", as the C interface calls them), so the C
// layer can name the matrix, its 1-based row and its column.
Eigen::MatrixXd complete_rows(DataView x, const char* which, Index& used, Index& dropped) {
  CompleteRows c;
  try {
    c = select_complete_rows(x);
  } catch (const LocatedError& e) {
    throw LocatedError(e.kind(), std::string(which) == "new" ? "batch" : "reference", e.row(), e.column(), e.problem());
  }
  used = static_cast<Index>(c.rows.size());
  dropped = c.dropped;
  if (used < 2)
    throw Error(ErrorKind::Data, std::string("compare: the ") + which + " batch has " + std::to_string(used) +
                                     " complete rows; at least 2 are needed");
  return gather(x, c.rows);
}

GroupSummary classical_summary(const Eigen::MatrixXd& x) {
  const MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
  return {static_cast<double>(x.rows()), mc.mean, mc.covariance};
}

// The reweighted DetMCD estimate of one group; an exact fit has no scatter to
// compare and is thrown as Error(ExactFit).
GroupSummary robust_summary(const Eigen::MatrixXd& x, const CompareOptions& o, const char* which) {
  DetMcdOptions d;
  d.alpha = o.alpha;
  d.reweight_level = o.reweight_level;
  const RobustFit fit = det_mcd(make_view(x), d);
  if (fit.exact_fit)
    throw Error(ErrorKind::ExactFit, std::string("compare: at least h rows of the ") + which +
                                         " batch lie on a hyperplane; no robust scatter exists");
  return {static_cast<double>(x.rows()), fit.location, fit.scatter};
}

template <class T, class F>
Outcome<T> attempt(F&& f) {
  Outcome<T> out;
  try {
    out.value = f();
  } catch (const Error& e) {
    if (e.kind() == ErrorKind::Cancelled) throw;
    out.kind = e.kind();
    out.reason = e.what();
  }
  return out;
}

RobustMeanShift robust_mean_shift(const Eigen::MatrixXd& ref, const Eigen::MatrixXd& batch, const CompareOptions& o) {
  RobustMeanShift out;
  out.reference = robust_summary(ref, o, "reference");
  out.batch = robust_summary(batch, o, "new");
  out.t2 = two_sample_t2(out.reference, out.batch).t2;
  out.p_value = std::numeric_limits<double>::quiet_NaN();
  if (o.permutations == 0) return out;

  const Index n1 = ref.rows(), n = ref.rows() + batch.rows(), p = ref.cols();
  Eigen::MatrixXd pooled(n, p);
  pooled << ref, batch;
  std::vector<Index> label(static_cast<std::size_t>(n));
  std::iota(label.begin(), label.end(), Index{0});
  PortableRandom rng(o.seed);
  Eigen::MatrixXd a(n1, p), b(n - n1, p);
  int at_least = 0;
  for (int k = 0; k < o.permutations; ++k) {
    mcd_detail::report_progress(o.progress, "relabelling", static_cast<double>(k) / o.permutations);
    // Fisher-Yates shuffle with the portable integer draw.
    for (Index i = 0; i + 1 < n; ++i)
      std::swap(label[static_cast<std::size_t>(i)],
                label[static_cast<std::size_t>(i + static_cast<Index>(rng.below(static_cast<std::uint64_t>(n - i))))]);
    for (Index i = 0; i < n1; ++i) a.row(i) = pooled.row(label[static_cast<std::size_t>(i)]);
    for (Index i = n1; i < n; ++i) b.row(i - n1) = pooled.row(label[static_cast<std::size_t>(i)]);
    try {
      const double t2 = two_sample_t2(robust_summary(a, o, "relabelled"), robust_summary(b, o, "relabelled")).t2;
      ++out.permutations_used;
      if (t2 >= out.t2) ++at_least;
    } catch (const Error& e) {
      if (e.kind() == ErrorKind::Cancelled) throw;
      ++out.permutations_failed;
    }
  }
  mcd_detail::report_progress(o.progress, "relabelling", 1.0);
  if (out.permutations_used == 0)
    throw Error(ErrorKind::ExactFit, "compare: no relabelling of the rows gave a usable robust fit");
  out.p_value = (1.0 + at_least) / (1.0 + out.permutations_used);
  return out;
}

}  // namespace

BatchComparison compare_batches(DataView reference, DataView batch, const CompareOptions& options) {
  check_options(options);
  if (reference.cols() < 1) throw Error(ErrorKind::Shape, "compare: no columns");
  if (reference.cols() != batch.cols())
    throw Error(ErrorKind::Shape, "compare: the reference has " + std::to_string(reference.cols()) +
                                      " columns, the new batch " + std::to_string(batch.cols()));
  BatchComparison out;
  Eigen::MatrixXd ref = complete_rows(reference, "reference", out.reference_rows, out.reference_dropped);
  Eigen::MatrixXd neu = complete_rows(batch, "new", out.batch_rows, out.batch_dropped);
  // Every statistic is location-invariant: work relative to one reference
  // row, so that data near 1e9 with a small spread keep their digits in the
  // difference of the means (the subtraction of nearby values is exact).
  const Eigen::RowVectorXd shift = ref.row(0);
  ref.rowwise() -= shift;
  neu.rowwise() -= shift;

  GroupSummary r = classical_summary(ref), b = classical_summary(neu);
  // Finite data can still have a variance beyond double precision (values or
  // a spread beyond about 1e154): refused here, naming the matrix and the
  // column, before the tests' degrees of freedom become NaN.
  for (const auto& [g, name] : {std::pair{&r, "reference"}, std::pair{&b, "batch"}})
    for (Index j = 0; j < g->covariance.rows(); ++j)
      if (!std::isfinite(g->covariance(j, j)))
        throw LocatedError(ErrorKind::Data, name, -1, j,
                           "has a variance that overflows double precision; rescale the data");
  out.mean_shift = attempt<TwoSampleT2>([&] { return two_sample_t2(r, b); });
  out.covariance_change = attempt<BoxM>([&] { return box_m({r, b}); });
  if (options.robust) {
    out.robust_mean_shift = attempt<RobustMeanShift>([&] {
      RobustMeanShift m = robust_mean_shift(ref, neu, options);
      m.reference.mean += shift.transpose();
      m.batch.mean += shift.transpose();
      return m;
    });
  } else {
    out.robust_mean_shift.kind = ErrorKind::Argument;
    out.robust_mean_shift.reason = "compare: the robust mean test was not requested";
  }

  const Index p = ref.cols();
  std::vector<double> welch_p;
  for (Index j = 0; j < p; ++j) {
    VariableShift v;
    const double rm = r.mean(j), bm = b.mean(j);
    v.reference_mean = rm + shift(j);
    v.batch_mean = bm + shift(j);
    v.reference_sd = std::sqrt(r.covariance(j, j));
    v.batch_sd = std::sqrt(b.covariance(j, j));
    v.shift_in_sd = (bm - rm) / v.reference_sd;
    v.welch = welch_t(r.n, rm, r.covariance(j, j), b.n, bm, b.covariance(j, j));
    welch_p.push_back(v.welch.p_value);
    out.variables.push_back(v);
  }
  const std::vector<double> adjusted = holm_adjust(welch_p);
  for (Index j = 0; j < p; ++j)
    out.variables[static_cast<std::size_t>(j)].p_holm = adjusted[static_cast<std::size_t>(j)];
  r.mean += shift.transpose();
  b.mean += shift.transpose();
  out.reference = r;
  out.batch = b;
  return out;
}

}  // namespace ellipsa::core
