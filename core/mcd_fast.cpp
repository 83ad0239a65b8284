#include "mcd_fast.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <numeric>
#include <optional>
#include <string>
#include <utility>

#include "error.hpp"
#include "parallel.hpp"
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
  Search(const Eigen::MatrixXd& z_, Index h_, const FastMcdOptions& opt_) : z(z_), h(h_), opt(opt_), rng(opt_.seed) {
    work.threads = opt_.threads;
  }
  const Eigen::MatrixXd& z;  // standardised full data
  Index h;
  const FastMcdOptions& opt;
  PortableRandom rng;
  int iterations = 0;
  int starts = 0;
  std::optional<SubsetFit> exact;   // set once an exact fit of the full data is found
  mcd_detail::CStepWorkspace work;  // buffers for every C-step of this fit on the calling thread
  // One scratch per worker thread for starts and candidates run side by side.
  std::vector<mcd_detail::CStepWorkspace> worker_work;
  std::uint64_t drawn = 0;  // starts drawn so far (each one's index among all starts)

  // Worker k's scratch for C-steps on `rows` x p, sized on the calling thread.
  mcd_detail::CStepWorkspace& worker(int k, int threads_inside, Index rows) {
    if (worker_work.size() <= static_cast<std::size_t>(k)) worker_work.resize(static_cast<std::size_t>(k) + 1);
    mcd_detail::CStepWorkspace& w = worker_work[static_cast<std::size_t>(k)];
    w.threads = threads_inside;
    w.reserve(rows, z.cols());
    return w;
  }
};

// The part of the progress range [from, to] a stage reports in. The callback
// is asked before every round of starts and before every round of C-steps, so
// that a request to stop is seen after at most one round of starts (one start
// on one thread; kFastMcdStartsPerThread per thread otherwise: a random subset and
// initial_csteps C-steps each) or one round of C-steps (at most best_kept
// C-steps): the bound that tests/core/test_mcd_fast.cpp checks and ellipsa.h
// states.
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

// Appends a row of [0, used.size()) not yet used, drawn uniformly, and marks it.
void add_unused_row(PortableRandom& rng, std::vector<char>& used, std::vector<Index>& rows) {
  Index r;
  do r = static_cast<Index>(rng.below(static_cast<std::uint64_t>(used.size())));
  while (used[static_cast<std::size_t>(r)]);
  used[static_cast<std::size_t>(r)] = 1;
  rows.push_back(r);
}

// A random (p+1)-subset of the stage's ns rows from the fit's stream, in start
// order (Rousseeuw & Van Driessen 1999, step 1 of a start).
std::vector<Index> draw_start(Search& s, Index ns, Index p, std::vector<char>& used) {
  std::vector<Index> rows;
  used.assign(static_cast<std::size_t>(ns), 0);
  for (Index k = 0; k <= p; ++k) add_unused_row(s.rng, used, rows);
  return rows;
}

// A stream of its own for a start whose subset must grow, so that the draws
// of the later starts (taken in order beforehand) do not depend on it: seeded
// from the fit's seed and the start's index (splitmix64 finaliser, Steele,
// Lea & Flood 2014).
PortableRandom growth_stream(std::uint64_t seed, std::uint64_t start) {
  std::uint64_t v = seed + 0x9e3779b97f4a7c15ULL * (start + 1);
  v = (v ^ (v >> 30)) * 0xbf58476d1ce4e5b9ULL;
  v = (v ^ (v >> 27)) * 0x94d049bb133111ebULL;
  return PortableRandom(v ^ (v >> 31));
}

// What one start came to: its fit after its C-steps (singular: lost, or an
// exact fit to check in order), the C-steps taken, or the error it raised.
struct StartOutcome {
  SubsetFit fit;
  int csteps = 0;
  std::exception_ptr error;
};

// One start on the stage rows zs: the drawn rows, grown by random rows while
// singular, then initial_csteps C-steps with hs. Touches nothing shared.
StartOutcome run_start(const Eigen::MatrixXd& zs, Index hs, std::vector<Index> rows, PortableRandom growth, int csteps,
                       mcd_detail::CStepWorkspace& work) {
  StartOutcome out;
  const Index ns = zs.rows();
  std::vector<char> used;
  for (;;) {
    std::vector<Index> sorted = rows;
    std::sort(sorted.begin(), sorted.end());
    out.fit = mcd_detail::fit_subset(zs, std::move(sorted));
    if (!out.fit.singular || static_cast<Index>(rows.size()) >= hs) break;
    if (used.empty()) {
      used.assign(static_cast<std::size_t>(ns), 0);
      for (Index r : rows) used[static_cast<std::size_t>(r)] = 1;
    }
    add_unused_row(growth, used, rows);
  }
  for (int step = 0; step < csteps && !out.fit.singular; ++step) {
    ++out.csteps;
    if (!mcd_detail::c_step(zs, hs, out.fit, work)) break;
  }
  return out;
}

// Starts inside one stage (the full data or a group): each start gets
// `initial_csteps` C-steps with hs; the best `best_kept` survive. The starts
// of a round run side by side; their outcomes are taken in start order, as one
// thread meets them, so an exact fit ends the stage before any later start's
// outcome or error counts, and the result does not depend on the threads.
std::vector<Candidate> run_starts(Search& s, const Eigen::MatrixXd& zs, Index hs, int n_starts, int& order,
                                  const Span& span) {
  const int threads = std::clamp(s.opt.threads, 1, kMaxThreads);
  const std::size_t p = static_cast<std::size_t>(zs.cols());
  const std::size_t start_bytes = sizeof(double) * (3 * p * p + 2 * p) + sizeof(Index) * static_cast<std::size_t>(hs);
  const int by_memory = static_cast<int>(std::min<std::size_t>(kFastMcdRoundBytes / start_bytes, 1u << 20));
  const int per_round = threads == 1 ? 1 : std::clamp(by_memory, threads, threads * kFastMcdStartsPerThread);
  std::vector<Candidate> out;
  std::vector<char> used;
  std::vector<std::vector<Index>> drawn;
  std::vector<std::uint64_t> index;
  std::vector<StartOutcome> outcomes;
  for (int k0 = 0; k0 < n_starts && !s.exact; k0 += per_round) {
    mcd_detail::report_progress(s.opt.progress, span.stage, span.at(static_cast<double>(k0) / n_starts));
    const int in_round = std::min(per_round, n_starts - k0);
    drawn.clear();
    index.clear();
    for (int i = 0; i < in_round; ++i) {
      drawn.push_back(draw_start(s, zs.rows(), zs.cols(), used));
      index.push_back(s.drawn++);
    }
    outcomes.assign(static_cast<std::size_t>(in_round), StartOutcome{});
    const int workers = parallel_workers(threads, in_round);
    for (int w = 0; w < workers; ++w) s.worker(w, 1, zs.rows());
    parallel_for(threads, in_round, [&](Index i, int worker) {
      const auto k = static_cast<std::size_t>(i);
      mcd_detail::CStepWorkspace& work = workers == 1 ? s.work : s.worker_work[static_cast<std::size_t>(worker)];
      try {
        outcomes[k] =
            run_start(zs, hs, std::move(drawn[k]), growth_stream(s.opt.seed, index[k]), s.opt.initial_csteps, work);
      } catch (...) {
        outcomes[k].error = std::current_exception();
      }
    });
    for (int i = 0; i < in_round && !s.exact; ++i) {
      StartOutcome& o = outcomes[static_cast<std::size_t>(i)];
      ++s.starts;
      if (o.error) std::rethrow_exception(o.error);
      s.iterations += o.csteps;
      if (o.fit.singular) {
        note_singular(s, zs, o.fit);
        continue;
      }
      out.push_back({std::move(o.fit), order++});
      if (static_cast<int>(out.size()) >= 4 * s.opt.best_kept) keep_best(out, s.opt.best_kept);
    }
  }
  keep_best(out, s.opt.best_kept);
  return out;
}

// C-steps on the rows zs for every candidate, all in lock step so that
// candidates reaching the same subset are merged; `steps` C-steps, or to
// convergence when steps < 0. from_other_stage: the fits were computed on other
// rows (a group or the pool), so their subsets and determinants do not compare
// with this stage's; only their mean and scatter are used as the start.
// The live candidates of a round run side by side, each on its own scratch
// (the threads left over go to each one's distances); their outcomes are taken
// in candidate order, as on one thread.
void refine(Search& s, const Eigen::MatrixXd& zs, Index hs, std::vector<Candidate>& c, int steps, bool from_other_stage,
            const Span& span) {
  const double inf = std::numeric_limits<double>::infinity();
  if (from_other_stage)
    for (auto& cand : c) {
      cand.fit.rows.clear();
      cand.fit.log_det = inf;
    }
  const int threads = std::clamp(s.opt.threads, 1, kMaxThreads);
  const int cap = steps < 0 ? s.opt.max_csteps : steps;
  std::vector<char> done(c.size(), 0), dropped(c.size(), 0), changed(c.size(), 0);
  std::vector<std::exception_ptr> error(c.size());
  std::vector<std::size_t> live;
  for (int step = 0; step < cap && !s.exact; ++step) {
    mcd_detail::report_progress(s.opt.progress, span.stage, span.at(static_cast<double>(step) / cap));
    live.clear();
    for (std::size_t k = 0; k < c.size(); ++k)
      if (!done[k]) live.push_back(k);
    const auto count = static_cast<Index>(live.size());
    if (threads == 1 || count <= 1) {
      s.work.reserve(zs.rows(), zs.cols());
      for (std::size_t k : live) {
        changed[k] = 0;
        try {
          changed[k] = mcd_detail::c_step(zs, hs, c[k].fit, s.work);
        } catch (...) {
          error[k] = std::current_exception();
        }
      }
    } else {
      const int workers = parallel_workers(threads, count);
      const int inside = std::max(1, threads / static_cast<int>(count));
      for (int w = 0; w < workers; ++w) s.worker(w, inside, zs.rows());
      parallel_for(threads, count, [&](Index i, int worker) {
        const std::size_t k = live[static_cast<std::size_t>(i)];
        changed[k] = 0;
        try {
          changed[k] = mcd_detail::c_step(zs, hs, c[k].fit, s.worker_work[static_cast<std::size_t>(worker)]);
        } catch (...) {
          error[k] = std::current_exception();
        }
      });
    }
    bool all_done = true;
    for (std::size_t k : live) {
      ++s.iterations;
      if (error[k]) std::rethrow_exception(error[k]);
      if (c[k].fit.singular) {
        note_singular(s, zs, c[k].fit);
        done[k] = dropped[k] = 1;
        continue;
      }
      if (!changed[k]) done[k] = 1;
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

  const TeamScope team(opt.threads);  // the search's loops share one team of threads (parallel.hpp)
  Search s(st.z, h, opt);
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
    r = mcd_detail::finish_fit(x, st, cands.front().fit, h, rule, opt.threads);
  }
  r.iterations = s.iterations;
  r.starts = s.starts;
  mcd_detail::report_progress(opt.progress, "done", 1.0);
  return r;
}

}  // namespace ellipsa::core
