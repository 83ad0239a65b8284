#include "mcd_fast.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <optional>
#include <string>
#include <utility>

#include "error.hpp"
#include "portable_random.hpp"

namespace ellipsa::core {
namespace {

using mcd_detail::SubsetFit;

// One candidate during the search: its fit on the current stage's rows.
struct Candidate {
  SubsetFit fit;
  int order = 0;  // creation order, the tie-breaker among equal determinants
};

// Same rows. (The determinants agree only to rounding: a fit may have been
// updated from its predecessor rather than computed from its rows.)
bool same_subset(const SubsetFit& a, const SubsetFit& b) {
  return std::abs(a.log_det - b.log_det) <= 1e-9 * (1.0 + std::abs(a.log_det)) && a.rows == b.rows;
}

// Keeps the `keep` lowest determinants among distinct subsets.
void keep_best(std::vector<Candidate>& c, int keep) {
  std::stable_sort(c.begin(), c.end(), [](const Candidate& a, const Candidate& b) {
    return a.fit.log_det < b.fit.log_det || (a.fit.log_det == b.fit.log_det && a.order < b.order);
  });
  std::vector<Candidate> out;
  for (auto& cand : c) {
    if (static_cast<int>(out.size()) >= keep) break;
    bool duplicate = false;
    for (const auto& o : out) duplicate = duplicate || same_subset(o.fit, cand.fit);
    if (!duplicate) out.push_back(std::move(cand));
  }
  c = std::move(out);
}

// The search state shared by the stages.
struct Search {
  const Eigen::MatrixXd& z;  // standardised full data
  Index h;
  const FastMcdOptions& opt;
  PortableRandom rng;
  int iterations = 0;
  int starts = 0;
  std::optional<SubsetFit> exact;   // set once an exact fit of the full data is found
  mcd_detail::CStepWorkspace work;  // buffers for every C-step of this fit
};

// The part of the progress range [from, to] a stage reports in. The callback
// is asked before every start and before every round of C-steps, so that a
// request to stop is seen after at most one start (a random subset and
// initial_csteps C-steps) or one round (at most best_kept C-steps): the bound
// that tests/core/test_mcd_fast.cpp checks and ellipsa.h states.
struct Span {
  const char* stage;
  double from, to;
  double at(double done) const { return from + (to - from) * std::clamp(done, 0.0, 1.0); }
};

// A singular fit on stage rows: an exact fit of the whole problem if h rows
// of the full data lie on its plane (recorded in s.exact); else the start is lost.
void note_singular(Search& s, const Eigen::MatrixXd& z_stage, const SubsetFit& fit) {
  if (!s.exact) s.exact = mcd_detail::exact_fit_subset(s.z, z_stage, fit, s.h);
}

// Random (p+1)-subset of the stage rows, grown by random rows while singular
// (Rousseeuw & Van Driessen 1999, step 1 of a start).
std::optional<SubsetFit> random_start(Search& s, const Eigen::MatrixXd& zs, Index hs) {
  const Index ns = zs.rows(), p = zs.cols();
  std::vector<Index> rows;
  std::vector<char> used(static_cast<std::size_t>(ns), 0);
  auto add_random_row = [&]() {
    Index r;
    do r = static_cast<Index>(s.rng.below(static_cast<std::uint64_t>(ns)));
    while (used[static_cast<std::size_t>(r)]);
    used[static_cast<std::size_t>(r)] = 1;
    rows.push_back(r);
  };
  for (Index k = 0; k <= p; ++k) add_random_row();
  for (;;) {
    std::vector<Index> sorted = rows;
    std::sort(sorted.begin(), sorted.end());
    SubsetFit f = mcd_detail::fit_subset(zs, std::move(sorted));
    if (!f.singular) return f;
    if (static_cast<Index>(rows.size()) >= hs) {
      note_singular(s, zs, f);
      return std::nullopt;
    }
    add_random_row();
  }
}

// Starts inside one stage (the full data or a group): each start gets
// `initial_csteps` C-steps with hs; the best `best_kept` survive.
std::vector<Candidate> run_starts(Search& s, const Eigen::MatrixXd& zs, Index hs, int n_starts, int& order,
                                  const Span& span) {
  std::vector<Candidate> out;
  for (int k = 0; k < n_starts && !s.exact; ++k) {
    mcd_detail::report_progress(s.opt.progress, span.stage, span.at(static_cast<double>(k) / n_starts));
    std::optional<SubsetFit> f = random_start(s, zs, hs);
    ++s.starts;
    if (!f) continue;
    for (int step = 0; step < s.opt.initial_csteps && !f->singular; ++step) {
      ++s.iterations;
      if (!mcd_detail::c_step(zs, hs, *f, s.work)) break;
    }
    if (f->singular) {
      note_singular(s, zs, *f);
      continue;
    }
    out.push_back({std::move(*f), order++});
    if (static_cast<int>(out.size()) >= 4 * s.opt.best_kept) keep_best(out, s.opt.best_kept);
  }
  keep_best(out, s.opt.best_kept);
  return out;
}

// C-steps on the rows zs for every candidate, all in lock step so that
// candidates reaching the same subset are merged; `steps` C-steps, or to
// convergence when steps < 0. from_other_stage: the fits were computed on other
// rows (a group or the pool), so their subsets and determinants do not compare
// with this stage's; only their mean and scatter are used as the start.
void refine(Search& s, const Eigen::MatrixXd& zs, Index hs, std::vector<Candidate>& c, int steps, bool from_other_stage,
            const Span& span) {
  const double inf = std::numeric_limits<double>::infinity();
  if (from_other_stage)
    for (auto& cand : c) {
      cand.fit.rows.clear();
      cand.fit.log_det = inf;
    }
  const int cap = steps < 0 ? s.opt.max_csteps : steps;
  std::vector<char> done(c.size(), 0), dropped(c.size(), 0);
  for (int step = 0; step < cap && !s.exact; ++step) {
    mcd_detail::report_progress(s.opt.progress, span.stage, span.at(static_cast<double>(step) / cap));
    bool all_done = true;
    for (std::size_t k = 0; k < c.size(); ++k) {
      if (done[k]) continue;
      ++s.iterations;
      const bool changed = mcd_detail::c_step(zs, hs, c[k].fit, s.work);
      if (c[k].fit.singular) {
        note_singular(s, zs, c[k].fit);
        done[k] = dropped[k] = 1;
        continue;
      }
      if (!changed) done[k] = 1;
      all_done = all_done && done[k];
    }
    // Merge candidates that now hold the same subset.
    for (std::size_t k = 0; k < c.size(); ++k)
      for (std::size_t l = 0; l < k && !dropped[k]; ++l)
        if (!dropped[l] && same_subset(c[l].fit, c[k].fit)) done[k] = dropped[k] = 1;
    if (all_done) break;
  }
  std::vector<Candidate> kept;
  for (std::size_t k = 0; k < c.size(); ++k)
    if (!dropped[k]) kept.push_back(std::move(c[k]));
  c = std::move(kept);
}

Eigen::MatrixXd gather_rows(const Eigen::MatrixXd& z, const std::vector<Index>& rows) {
  Eigen::MatrixXd out(static_cast<Index>(rows.size()), z.cols());
  for (std::size_t k = 0; k < rows.size(); ++k) out.row(static_cast<Index>(k)) = z.row(rows[k]);
  return out;
}

Index scaled_h(Index rows, Index h, Index n) {
  // ceil(rows * h / n) without floating point.
  return std::max<Index>(1, (rows * h + n - 1) / n);
}

void check_options(const FastMcdOptions& o) {
  if (o.starts < 1 || o.best_kept < 1 || o.initial_csteps < 0 || o.max_csteps < 1 || o.group_size < 2 ||
      o.max_groups < 1 || o.nested_threshold < 1 || o.full_data_rows < 1)
    throw Error(ErrorKind::Argument,
                "FAST-MCD: starts, best_kept, max_csteps, group_size, max_groups, full_data_rows must be positive");
}

}  // namespace

RobustFit univariate_mcd(DataView x, double alpha, const mcd_detail::FinishRule& rule) {
  mcd_detail::check_input(x, alpha, true, "univariate MCD");
  if (x.cols() != 1) throw Error(ErrorKind::Shape, "univariate MCD: data must have one column");
  const Index n = x.rows();
  const Index h = mcd_subset_size(n, 1, alpha);
  const mcd_detail::Standardised s = mcd_detail::standardise(x, mcd_detail::ColumnScale::Mad);
  std::vector<Index> order(static_cast<std::size_t>(n));
  std::iota(order.begin(), order.end(), Index{0});
  const Eigen::VectorXd y0 = s.z.col(0);
  std::stable_sort(order.begin(), order.end(), [&y0](Index a, Index b) { return y0(a) < y0(b); });
  std::vector<double> y(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) y[static_cast<std::size_t>(i)] = y0(order[static_cast<std::size_t>(i)]);

  // Exact two-pass sum of squares of the window starting at j.
  auto window_ss = [&](Index j, double* mean_out) {
    double m = 0.0;
    for (Index i = j; i < j + h; ++i) m += y[static_cast<std::size_t>(i)];
    m /= static_cast<double>(h);
    double ss = 0.0;
    for (Index i = j; i < j + h; ++i) ss += (y[static_cast<std::size_t>(i)] - m) * (y[static_cast<std::size_t>(i)] - m);
    if (mean_out) *mean_out = m;
    return ss;
  };
  // Sliding update of mean and sum of squares, refreshed exactly every h
  // windows so that rounding cannot drift.
  const Index windows = n - h + 1;
  std::vector<double> ss(static_cast<std::size_t>(windows));
  double mean = 0.0;
  double cur = window_ss(0, &mean);
  ss[0] = cur;
  for (Index j = 1; j < windows; ++j) {
    if (j % std::max<Index>(h, 64) == 0) {
      cur = window_ss(j, &mean);
    } else {
      const double out = y[static_cast<std::size_t>(j - 1)], in = y[static_cast<std::size_t>(j + h - 1)];
      const double old_mean = mean;
      mean += (in - out) / static_cast<double>(h);
      cur = std::max(0.0, cur + (in - out) * (in - mean + out - old_mean));
    }
    ss[static_cast<std::size_t>(j)] = cur;
  }
  // Re-evaluate exactly every window the sliding values cannot separate from the best.
  const double lowest = *std::min_element(ss.begin(), ss.end());
  const double slack = 1e-9 * lowest + 1e-12 * static_cast<double>(h);
  Index best = 0;
  double best_ss = std::numeric_limits<double>::infinity();
  for (Index j = 0; j < windows; ++j) {
    if (ss[static_cast<std::size_t>(j)] > lowest + slack) continue;
    const double exact = window_ss(j, nullptr);
    if (exact < best_ss) {
      best_ss = exact;
      best = j;
    }
  }
  std::vector<Index> rows(order.begin() + best, order.begin() + best + h);
  std::sort(rows.begin(), rows.end());
  const SubsetFit f = mcd_detail::fit_subset(s.z, std::move(rows));
  RobustFit r = f.singular ? mcd_detail::exact_fit_result(x, s, f, h) : mcd_detail::finish_fit(x, s, f, h, rule);
  r.starts = 1;
  return r;
}

// Rousseeuw & Van Driessen (1999), FAST-MCD.
RobustFit fast_mcd(DataView x, const FastMcdOptions& opt) {
  check_options(opt);
  mcd_detail::check_input(x, opt.alpha, true, "FAST-MCD");
  const Index n = x.rows(), p = x.cols();
  const mcd_detail::FinishRule rule{opt.reweight_level,
                                    small_sample_factors(McdFamily::Fast, opt.small_sample, n, p, opt.alpha),
                                    opt.raw_consistency};
  if (p == 1) return univariate_mcd(x, opt.alpha, rule);
  const Index h = mcd_subset_size(n, p, opt.alpha);
  mcd_detail::report_progress(opt.progress, "standardise", 0.0);
  const mcd_detail::Standardised st = mcd_detail::standardise(x, mcd_detail::ColumnScale::Mad, opt.threads);
  if (st.constant_column >= 0) return mcd_detail::constant_column_result(x, st, h);

  std::vector<Index> all(static_cast<std::size_t>(n));
  std::iota(all.begin(), all.end(), Index{0});
  if (h == n) {
    const SubsetFit f = mcd_detail::fit_subset(st.z, all);
    return f.singular ? mcd_detail::exact_fit_result(x, st, f, h) : mcd_detail::finish_fit(x, st, f, h, rule);
  }

  Search s{st.z, h, opt, PortableRandom(opt.seed), 0, 0, std::nullopt, {}};
  s.work.threads = opt.threads;
  std::vector<Candidate> cands;
  int order = 0;
  if (n <= opt.nested_threshold) {
    cands = run_starts(s, st.z, h, opt.starts, order, Span{"random starts", 0.05, 0.7});
  } else {
    // Nested scheme: up to max_groups disjoint random groups of about
    // group_size rows, starts inside each, then the pooled groups.
    const Index groups = std::max<Index>(1, std::min<Index>(opt.max_groups, n / opt.group_size));
    const Index pool_size = std::min(n, groups * opt.group_size);
    std::vector<Index> perm = all;
    for (Index k = 0; k < pool_size; ++k)  // partial Fisher-Yates
      std::swap(perm[static_cast<std::size_t>(k)],
                perm[static_cast<std::size_t>(k + static_cast<Index>(s.rng.below(static_cast<std::uint64_t>(n - k))))]);
    std::vector<Index> pool(perm.begin(), perm.begin() + pool_size);
    const int starts_per_group = std::max(1, opt.starts / static_cast<int>(groups));
    std::vector<Candidate> pooled;
    for (Index g = 0; g < groups && !s.exact; ++g) {
      const double g0 = 0.05 + 0.5 * static_cast<double>(g) / static_cast<double>(groups);
      const double g1 = 0.05 + 0.5 * static_cast<double>(g + 1) / static_cast<double>(groups);
      const Index lo = g * pool_size / groups, hi = (g + 1) * pool_size / groups;
      const Eigen::MatrixXd zg = gather_rows(st.z, std::vector<Index>(pool.begin() + lo, pool.begin() + hi));
      std::vector<Candidate> best =
          run_starts(s, zg, scaled_h(hi - lo, h, n), starts_per_group, order, Span{"random starts in groups", g0, g1});
      for (auto& c : best) pooled.push_back(std::move(c));
    }
    if (!s.exact) {
      const Eigen::MatrixXd zp = gather_rows(st.z, pool);
      refine(s, zp, scaled_h(pool_size, h, n), pooled, opt.initial_csteps, true, Span{"pooled groups", 0.6, 0.7});
      // The m_full best pooled results go on to the full data (Rousseeuw &
      // Van Driessen 1999, nested extensions: m_full depends on n).
      const Index m_full = std::clamp<Index>(opt.full_data_rows / n, 1, opt.best_kept);
      keep_best(pooled, static_cast<int>(m_full));
      cands = std::move(pooled);
    }
  }
  if (!s.exact) {
    refine(s, st.z, h, cands, -1, n > opt.nested_threshold, Span{"C-steps on all rows", 0.7, 0.95});
    keep_best(cands, 1);
    // The winner's fit may come from updates (update_fit): report the fit
    // computed from its rows.
    if (!cands.empty()) {
      SubsetFit fresh;
      fresh.rows = cands.front().fit.rows;
      mcd_detail::fit_rows(st.z, fresh, s.work);
      if (fresh.singular) note_singular(s, st.z, fresh);
      else cands.front().fit = std::move(fresh);
    }
  }
  mcd_detail::report_progress(opt.progress, "reweighting", 0.95);
  RobustFit r;
  if (s.exact) {
    r = mcd_detail::exact_fit_result(x, st, *s.exact, h);
  } else if (cands.empty()) {
    throw Error(ErrorKind::Data, "FAST-MCD: no start gave a nonsingular subset (internal error)");
  } else {
    r = mcd_detail::finish_fit(x, st, cands.front().fit, h, rule);
  }
  r.iterations = s.iterations;
  r.starts = s.starts;
  mcd_detail::report_progress(opt.progress, "done", 1.0);
  return r;
}

}  // namespace ellipsa::core
