#include "mcd_deterministic.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <exception>
#include <numeric>
#include <optional>
#include <utility>
#include <vector>

#include "error.hpp"
#include "mcd_fast.hpp"
#include "order_statistics.hpp"
#include "parallel.hpp"
#include "ranks.hpp"
#include "robust_scale.hpp"

namespace ellipsa::core {
namespace mcd_detail {
namespace {

// Correlation matrix of the columns of c, centring c in place (c is scratch).
Eigen::MatrixXd correlation_of_scratch(Eigen::MatrixXd& c) {
  const Eigen::RowVectorXd mean = c.colwise().mean();
  c.rowwise() -= mean;
  Eigen::MatrixXd s = c.transpose() * c;
  const Eigen::VectorXd sd = s.diagonal().cwiseSqrt();
  for (Index j = 0; j < s.cols(); ++j)
    for (Index i = 0; i < s.rows(); ++i)
      s(i, j) = (sd(i) > 0.0 && sd(j) > 0.0) ? s(i, j) / (sd(i) * sd(j)) : (i == j ? 1.0 : 0.0);
  return s;
}

// Spatial median by Weiszfeld iterations from the coordinatewise median.
Eigen::VectorXd spatial_median(const Eigen::MatrixXd& z) {
  const Index p = z.cols();
  Eigen::VectorXd m(p);
  for (Index j = 0; j < p; ++j) m(j) = median(z.col(j));
  for (int it = 0; it < 200; ++it) {
    const Eigen::VectorXd dist = (z.rowwise() - m.transpose()).rowwise().norm();
    const Eigen::VectorXd w = (1.0 / dist.array().max(1e-12)).matrix();
    const Eigen::VectorXd next = (z.transpose() * w) / w.sum();
    const double step = (next - m).norm();
    m = next;
    if (step <= 1e-12 * (1.0 + m.norm())) break;
  }
  return m;
}

}  // namespace

std::vector<Eigen::MatrixXd> deterministic_starts(const Eigen::MatrixXd& z, bool with_ogk) {
  ScaleWorkspace workspace;
  return deterministic_starts(z, with_ogk, workspace, nullptr, ColumnScale::Qn);
}

std::vector<Eigen::MatrixXd> deterministic_starts(const Eigen::MatrixXd& z, bool with_ogk, ScaleWorkspace& workspace,
                                                  StartBasis* ogk_basis, ColumnScale scale, int threads) {
  const Index n = z.rows(), p = z.cols();
  std::vector<Eigen::MatrixXd> s;
  // Two n x p scratch tables serve the starts below in turn: a fresh table
  // for each (eight of them) is faulted in page by page on every fit, which
  // cost more than the arithmetic of the starts it held (docs/performance.md).
  Eigen::MatrixXd a(n, p), b(n, p);
  // 1. Correlation of the tanh-transformed data (columns on the threads).
  parallel_for(threads, p, [&](Index j, int) { a.col(j) = z.col(j).array().tanh().matrix(); });
  s.push_back(correlation_of_scratch(a));
  // 2. Spearman correlation (ranks in a), 3. normal-scores correlation (in b).
  const boost::math::normal_distribution<double> normal;
  std::vector<double> score(static_cast<std::size_t>(n));  // by integer rank
  constexpr Index kScoreBlock = 4096;                      // n normal quantiles, each on its own: blocks on the threads
  parallel_for(threads, chunk_count(n, kScoreBlock), [&](Index c, int) {
    for (Index k = c * kScoreBlock; k < std::min(n, (c + 1) * kScoreBlock); ++k)
      score[static_cast<std::size_t>(k)] = boost::math::quantile(
          normal, (static_cast<double>(k + 1) - 1.0 / 3.0) / (static_cast<double>(n) + 1.0 / 3.0));
  });
  // Qn of column j of z is 0 exactly when at least k = C(floor(n/2)+1, 2)
  // pairs of its values coincide (differences of unequal doubles are never
  // 0); the tied pairs come with the ranks.
  const long long qn_h = n / 2 + 1, qn_k = qn_h * (qn_h - 1) / 2;
  std::vector<char> zero_qn(static_cast<std::size_t>(p));
  // One column per task (each writes its own column and flag).
  std::vector<RankWorkspace> rank_work(static_cast<std::size_t>(parallel_workers(threads, p)));
  for (auto& w : rank_work) w.reserve(n);  // on this thread (CStepWorkspace::reserve says why)
  parallel_for(threads, p, [&](Index j, int worker) {
    zero_qn[static_cast<std::size_t>(j)] =
        average_ranks(z.col(j), a.col(j), rank_work[static_cast<std::size_t>(worker)]) >= qn_k;
    for (Index i = 0; i < n; ++i) {
      const double rk = a(i, j);
      const double whole = std::floor(rk);
      b(i, j) = rk == whole ? score[static_cast<std::size_t>(whole) - 1]
                            : boost::math::quantile(normal, (rk - 1.0 / 3.0) / (static_cast<double>(n) + 1.0 / 3.0));
    }
  });
  s.push_back(correlation_of_scratch(a));
  s.push_back(correlation_of_scratch(b));
  // 4. Spatial-sign covariance around the spatial median (signs in a).
  {
    a = z.rowwise() - spatial_median(z).transpose();
    for (Index i = 0; i < n; ++i) {
      const double nr = a.row(i).norm();
      if (nr > 0.0) a.row(i) /= nr;
    }
    s.push_back((a.transpose() * a) / static_cast<double>(n));
  }
  // 5. Covariance of the ceil(n/2) rows nearest the coordinatewise median (0).
  {
    const Eigen::VectorXd norms = z.rowwise().squaredNorm();
    s.push_back(fit_subset(z, smallest_h(norms, (n + 1) / 2, z)).cov);
  }
  // 6. Raw OGK (Maronna & Zamar 2002) with the robust scale s (Qn, or tau
  // for large n): U_jk = (s(z_j + z_k)^2 - s(z_j - z_k)^2) / 4 on columns
  // scaled to unit s, then the eigenvalues of U replaced by s^2 of the
  // projections on its eigenvectors. The columns of z were divided by their
  // s in the standardisation (step 1 of DetMCD), so s(z_j) is 1 up to
  // rounding and is not evaluated again; it is 0 (that standardisation fell
  // back to another scale) exactly when the column has at least qn_k tied
  // pairs (Qn), or when more than half its values equal its median (tau:
  // the MAD is 0; one O(n) evaluation tells).
  if (with_ogk) {
    // p(p+1)/2 scale evaluations, each on n values and independent of the
    // others: one entry of U per task, each thread with its own buffers.
    Eigen::MatrixXd u(p, p);
    const Index entries = p * (p + 1) / 2;
    const int workers = parallel_workers(threads, entries);
    std::vector<ScaleWorkspace> more(static_cast<std::size_t>(std::max(workers - 1, 0)));
    auto buffers_of = [&](int worker) -> ScaleWorkspace& {
      return worker == 0 ? workspace : more[static_cast<std::size_t>(worker - 1)];
    };
    std::vector<Eigen::VectorXd> sums(static_cast<std::size_t>(workers)), diffs(static_cast<std::size_t>(workers));
    parallel_for(threads, entries, [&](Index e, int worker) {
      // Entry e of the lower triangle, row by row: (j, k) with k <= j.
      Index j = 0;
      while ((j + 1) * (j + 2) / 2 <= e) ++j;
      const Index k = e - j * (j + 1) / 2;
      ScaleWorkspace& ws = buffers_of(worker);
      if (k == j) {
        const bool zero = scale == ColumnScale::Qn ? zero_qn[static_cast<std::size_t>(j)] != 0
                                                   : !(column_scale(scale, z.col(j), ws) > 0.0);
        u(j, j) = zero ? 0.0 : 1.0;
        return;
      }
      Eigen::VectorXd& sum = sums[static_cast<std::size_t>(worker)];
      Eigen::VectorXd& diff = diffs[static_cast<std::size_t>(worker)];
      sum = z.col(j) + z.col(k);
      diff = z.col(j) - z.col(k);
      const double sum_scale = column_scale(scale, sum, ws);
      const double diff_scale = column_scale(scale, diff, ws);
      u(j, k) = u(k, j) = 0.25 * (sum_scale * sum_scale - diff_scale * diff_scale);
    });
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(u);
    a.noalias() = z * es.eigenvectors();  // the projections
    Eigen::VectorXd root(p);
    parallel_for(threads, p, [&](Index l, int worker) { root(l) = column_scale(scale, a.col(l), buffers_of(worker)); });
    s.push_back(es.eigenvectors() * root.cwiseAbs2().asDiagonal() * es.eigenvectors().transpose());
    // Step 3 of DetMCD applied to this start would find the same eigenvectors
    // and the same projection scales again: hand them over instead.
    if (ogk_basis) {
      ogk_basis->vectors = es.eigenvectors();
      ogk_basis->root = root;
    }
  }
  return s;
}

bool start_distances(Eigen::VectorXd& d2, const Eigen::MatrixXd& z, const Eigen::MatrixXd& s, ColumnScale scale,
                     StartScratch& scratch) {
  const Index p = z.cols();
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(s);
  scratch.projected.noalias() = z * es.eigenvectors();
  Eigen::VectorXd root(p);  // robust scales of the projections: the re-estimated sqrt eigenvalues
  for (Index l = 0; l < p; ++l) root(l) = column_scale(scale, scratch.projected.col(l), scratch.scale);
  return start_distances(d2, z, StartBasis{es.eigenvectors(), root}, scratch);
}

bool start_distances(Eigen::VectorXd& d2, const Eigen::MatrixXd& z, const StartBasis& basis, StartScratch& scratch) {
  const Index n = z.rows(), p = z.cols();
  for (Index l = 0; l < p; ++l)
    if (!(basis.root(l) > 0.0)) return false;
  // Centre Sigma^{1/2} med(z Sigma^{-1/2}) with the symmetric square root;
  // distances |(z_i - centre) Sigma^{-1/2}|^2 in those coordinates.
  const Eigen::MatrixXd& e = basis.vectors;
  const Eigen::MatrixXd inv_root = e * basis.root.cwiseInverse().asDiagonal() * e.transpose();
  Eigen::MatrixXd& y = scratch.projected;
  y.noalias() = z * inv_root;
  Eigen::RowVectorXd med(p);
  for (Index j = 0; j < p; ++j) med(j) = median_of(y.col(j).data(), n, scratch.select);
  d2 = (y.rowwise() - med).rowwise().squaredNorm();
  return true;
}

}  // namespace mcd_detail

// Hubert, Rousseeuw & Verdonck (2012), DetMCD.
RobustFit det_mcd(DataView x, const DetMcdOptions& opt) {
  if (opt.max_csteps < 1) throw Error(ErrorKind::Argument, "DetMCD: max_csteps must be positive");
  mcd_detail::check_input(x, opt.alpha, true, "DetMCD");
  const Index n = x.rows(), p = x.cols();
  const TeamScope team(opt.threads);  // the fit's loops share one team of threads (parallel.hpp)
  const mcd_detail::FinishRule rule{opt.reweight_level,
                                    small_sample_factors(McdFamily::Deterministic, opt.small_sample, n, p, opt.alpha),
                                    opt.raw_consistency};
  if (p == 1) return univariate_mcd(x, opt.alpha, rule);
  const Index h = mcd_subset_size(n, p, opt.alpha);
  mcd_detail::report_progress(opt.progress, "standardise", 0.0);
  // Qn up to opt.qn_max_rows rows, the O(n) tau scale beyond (mcd_deterministic.hpp).
  const mcd_detail::ColumnScale scale =
      n <= opt.qn_max_rows ? mcd_detail::ColumnScale::Qn : mcd_detail::ColumnScale::Tau;
  const mcd_detail::Standardised st = mcd_detail::standardise(x, scale, opt.threads);
  if (st.constant_column >= 0) return mcd_detail::constant_column_result(x, st, h);
  const Eigen::MatrixXd& z = st.z;

  // All rows on one hyperplane: no start can be nonsingular.
  std::vector<Index> all(static_cast<std::size_t>(n));
  std::iota(all.begin(), all.end(), Index{0});
  {
    const mcd_detail::SubsetFit whole = mcd_detail::fit_subset(z, all);
    if (whole.singular) {
      const auto ex = mcd_detail::exact_fit_subset(z, z, whole, h);
      if (ex) return mcd_detail::exact_fit_result(x, st, *ex, h);
    }
    if (h == n) return mcd_detail::finish_fit(x, st, whole, h, rule, opt.threads);
  }

  mcd_detail::report_progress(opt.progress, "starting estimates", 0.05);
  ScaleWorkspace workspace;  // one set of Qn buffers for all p(p+1)/2 + 6p scales
  mcd_detail::StartBasis ogk;
  const std::vector<Eigen::MatrixXd> starts =
      mcd_detail::deterministic_starts(z, true, workspace, &ogk, scale, opt.threads);
  const Index half = (n + 1) / 2;
  const Index start_count = static_cast<Index>(starts.size());
  // Each start's chain of C-steps. The chains run in lockstep: one pass over
  // the rows computes every live chain's distances (chunks of rows on the
  // threads), then each chain selects and refits on its own (chains on the
  // threads). A chain's steps are those c_steps_to_convergence() takes, up
  // to the rounding of the distances (one wide product for all live chains
  // instead of one per chain: the rows chosen differ only where two
  // distances tie within it), and nothing depends on the thread count; the
  // outcomes are taken in the starts' fixed order, as one thread running the
  // starts one by one would. Unlike that one thread, every chain runs to its
  // end even when an earlier start turns out an exact fit.
  struct Chain {
    bool usable = false;  // distances defined (no projection of zero scale)
    bool live = false;    // C-steps still to take
    bool changed = false;
    mcd_detail::SubsetFit fit;
    int steps = 0;
    Eigen::VectorXd d2;        // the chain's distances of all rows
    std::exception_ptr error;  // what the start threw, raised when its turn comes
  };
  std::vector<Chain> chains(starts.size());
  const int workers = parallel_workers(opt.threads, start_count);
  // Per-thread scratch, sized on this thread (CStepWorkspace::reserve says why).
  std::vector<mcd_detail::StartScratch> start_work(static_cast<std::size_t>(workers));
  std::vector<mcd_detail::CStepWorkspace> chain_work(static_cast<std::size_t>(workers));  // threads 1 each
  for (auto& w : chain_work) w.reserve(n, p);
  for (auto& s : start_work) {
    s.projected.resize(n, p);
    s.select.reserve(static_cast<std::size_t>(n) + 2048);  // order_statistics' sample rides behind the copy
  }
  for (auto& c : chains) {
    c.d2.resize(n);
    c.fit.rows.reserve(static_cast<std::size_t>(n));  // recycled through the C-steps' row lists
  }
  mcd_detail::CStepWorkspace shared;  // the lockstep distances, chunks of rows on the threads
  shared.threads = opt.threads;
  shared.reserve(n, p);
  // Step 3 and the first h-subset of each start, side by side.
  mcd_detail::report_progress(opt.progress, "starting subsets", 0.15);
  parallel_for(opt.threads, start_count, [&](Index k, int worker) {
    Chain& c = chains[static_cast<std::size_t>(k)];
    try {
      mcd_detail::StartScratch& scratch = start_work[static_cast<std::size_t>(worker)];
      // The last start is the OGK one, whose eigenbasis and scales are known.
      c.usable = k + 1 == start_count
                     ? mcd_detail::start_distances(c.d2, z, ogk, scratch)
                     : mcd_detail::start_distances(c.d2, z, starts[static_cast<std::size_t>(k)], scale, scratch);
      if (!c.usable) return;
      mcd_detail::CStepWorkspace& w = chain_work[static_cast<std::size_t>(worker)];
      mcd_detail::smallest_h_into(c.d2, half, z, w);
      std::vector<Index> rows = std::move(c.fit.rows);  // the capacity sized on the calling thread
      rows.assign(w.rows.begin(), w.rows.end());
      c.fit = mcd_detail::fit_subset(z, std::move(rows));
      c.live = !c.fit.singular && opt.max_csteps > 0;
    } catch (...) {
      c.error = std::current_exception();
    }
  });
  std::vector<Index> live;
  std::vector<const mcd_detail::SubsetFit*> live_fits;
  std::vector<Eigen::VectorXd*> live_d2;
  for (;;) {
    live.clear();
    live_fits.clear();
    live_d2.clear();
    for (Index k = 0; k < start_count; ++k) {
      Chain& c = chains[static_cast<std::size_t>(k)];
      if (!c.live) continue;
      live.push_back(k);
      live_fits.push_back(&c.fit);
      live_d2.push_back(&c.d2);
    }
    // Asked between steps, on the calling thread: the fraction of chains done.
    mcd_detail::report_progress(opt.progress, "C-steps",
                                0.2 + 0.7 * static_cast<double>(start_count - static_cast<Index>(live.size())) /
                                          static_cast<double>(start_count));
    if (live.empty()) break;
    try {
      mcd_detail::subset_distances(z, live_fits, live_d2, shared);
    } catch (...) {  // the earliest live chain meets it (its turn comes first)
      chains[static_cast<std::size_t>(live.front())].error = std::current_exception();
      for (Index k : live) chains[static_cast<std::size_t>(k)].live = false;
      continue;
    }
    parallel_for(opt.threads, static_cast<Index>(live.size()), [&](Index i, int worker) {
      Chain& c = chains[static_cast<std::size_t>(live[static_cast<std::size_t>(i)])];
      try {
        // One step of c_steps_to_convergence() (mcd_common.cpp), same stopping rules.
        ++c.steps;
        if (!mcd_detail::c_step_from_distances(z, h, c.fit, c.d2, chain_work[static_cast<std::size_t>(worker)])) {
          c.live = false;
          return;
        }
        c.changed = true;
        c.live = !c.fit.singular && c.steps < opt.max_csteps;
      } catch (...) {
        c.error = std::current_exception();
        c.live = false;
      }
    });
  }
  // A fit changed by the steps is recomputed from its rows, as
  // c_steps_to_convergence() ends, so it depends on the set of rows only.
  parallel_for(opt.threads, start_count, [&](Index k, int) {
    Chain& c = chains[static_cast<std::size_t>(k)];
    if (c.error || !c.changed || c.fit.singular) return;
    try {
      c.fit = mcd_detail::fit_subset(z, std::move(c.fit.rows));
    } catch (...) {
      c.error = std::current_exception();
    }
  });
  std::optional<mcd_detail::SubsetFit> best;
  int iterations = 0, usable = 0;
  // The outcomes in the starts' order, as one thread would meet them: an
  // exact fit returns before any later start's error.
  for (Chain& c : chains) {
    if (c.error) std::rethrow_exception(c.error);
    if (!c.usable) continue;
    mcd_detail::SubsetFit& f = c.fit;
    iterations += c.steps;
    if (f.singular) {
      const auto ex = mcd_detail::exact_fit_subset(z, z, f, h);
      if (ex) {
        RobustFit r = mcd_detail::exact_fit_result(x, st, *ex, h);
        r.iterations = iterations;
        r.starts = usable + 1;
        return r;
      }
      continue;
    }
    ++usable;
    // Strictly lower only: on a tie the earlier start (fixed order) wins.
    if (!best || f.log_det < best->log_det) best = std::move(f);
  }
  if (!best) throw Error(ErrorKind::Data, "DetMCD: no starting estimate gave a nonsingular subset");
  mcd_detail::report_progress(opt.progress, "reweighting", 0.95);
  RobustFit r = mcd_detail::finish_fit(x, st, *best, h, rule, opt.threads);
  r.iterations = iterations;
  r.starts = usable;
  mcd_detail::report_progress(opt.progress, "done", 1.0);
  return r;
}

}  // namespace ellipsa::core
