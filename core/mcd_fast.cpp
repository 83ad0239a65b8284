#include "mcd_fast.hpp"

#include <Eigen/Eigenvalues>

#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <iterator>
#include <limits>
#include <numeric>
#include <optional>
#include <random>
#include <string>
#include <utility>

#include "error.hpp"

namespace ellipsa::core {
namespace {

using mcd_detail::SubsetFit;

// Uniform integers from a fixed engine by rejection: portable across standard
// libraries (the engine's output sequence is fixed by the C++ standard).
class Sampler {
 public:
  explicit Sampler(std::uint64_t seed) : engine_(seed) {}
  // Uniform on {0, ..., m-1}, m >= 1, without modulo bias.
  Index below(Index m) {
    const std::uint64_t um = static_cast<std::uint64_t>(m);
    const std::uint64_t reject_under = (0 - um) % um;  // 2^64 mod m
    for (;;) {
      const std::uint64_t v = engine_();
      if (v >= reject_under) return static_cast<Index>(v % um);
    }
  }

 private:
  std::mt19937_64 engine_;
};

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


// ---------------------------------------------------------------------------
// Per-fit workspace and the C-step used by every stage. Buffers live for one
// fast_mcd() call, so no C-step allocates once the sizes are reached.

// Order statistics k-1 and k (0-based, k >= 1; `below` = value k-1, `at` =
// value k) of v[0..n) without reordering v. Order statistics are unique
// values, so the answer equals that of std::nth_element on a copy; only the
// work differs. Large inputs: a deterministic strided sample brackets the
// k-th value (Floyd & Rivest 1975, "Expected time bounds for selection"), one
// pass counts the values under the bracket (keeping their maximum) and copies
// those inside it, and std::nth_element finishes on that small remainder.
// When the sample misleads (the k-th value falls outside the bracket), the
// full copy is selected instead: slower, never wrong.
struct OrderPair {
  double below, at;
};
OrderPair order_statistics(const double* v, Index n, Index k, std::vector<double>& buf) {
  constexpr Index kSmall = 8192;
  const auto on_copy = [&]() {
    buf.assign(v, v + n);
    const auto kth = buf.begin() + k;
    std::nth_element(buf.begin(), kth, buf.begin() + n);
    return OrderPair{*std::max_element(buf.begin(), kth), *kth};
  };
  if (n <= kSmall) return on_copy();
  constexpr Index kSample = 2048;
  buf.resize(static_cast<std::size_t>(n + kSample));
  double* sample = buf.data() + n;
  for (Index i = 0; i < kSample; ++i) sample[i] = v[(i * n) / kSample];
  // Rank of the k-th value inside the sample, +- 4 binomial standard deviations.
  const double q = (static_cast<double>(k) + 0.5) / static_cast<double>(n);
  const Index r = static_cast<Index>(q * kSample);
  const Index gap = 8 + static_cast<Index>(4.0 * std::sqrt(kSample * q * (1.0 - q)));
  const double inf = std::numeric_limits<double>::infinity();
  double lo = -inf, hi = inf;
  Index from = 0;
  if (r - gap >= 0) {
    std::nth_element(sample, sample + (r - gap), sample + kSample);
    lo = sample[r - gap];
    from = r - gap + 1;
  }
  if (r + gap < kSample) {
    std::nth_element(sample + from, sample + (r + gap), sample + kSample);
    hi = sample[r + gap];
  }
  Index under = 0, inside = 0;
  double* keep = buf.data();
  for (Index i = 0; i < n; ++i) {  // branch-free: the tests are unpredictable
    const double x = v[i];
    keep[inside] = x;
    under += x < lo;
    inside += (x >= lo) & (x <= hi);
  }
  if (k < under || k >= under + inside) return on_copy();
  double* kth = keep + (k - under);
  std::nth_element(keep, kth, keep + inside);
  if (kth != keep) return {*std::max_element(keep, kth), *kth};
  double under_max = -inf;  // rare: value k-1 lies under the bracket
  for (Index i = 0; i < n; ++i)
    if (v[i] < lo) under_max = std::max(under_max, v[i]);
  return {under_max, *kth};
}

// Median as robust_scale's median(): the middle order statistic, or the
// midpoint of the two middle ones written so that it cannot overflow.
double median_of(const double* v, Index n, std::vector<double>& buf) {
  if (n == 1) return v[0];
  const OrderPair m = order_statistics(v, n, n / 2, buf);
  if (n % 2 == 1) return m.at;
  return m.below + (m.at - m.below) / 2.0;
}

// mcd_detail::standardise(x, ColumnScale::Mad) with the same values: median
// and MAD (normal-consistent) per column, the root mean square about the mean
// when the MAD is 0, and 1 for a constant column. Faster only because each
// order statistic is found by order_statistics() and the median is not computed
// twice per column.
mcd_detail::Standardised standardise_mad(DataView x) {
  const Index n = x.rows(), p = x.cols();
  mcd_detail::Standardised s;
  s.centre.resize(p);
  s.scale.resize(p);
  s.z.resize(n, p);
  const double q75 = boost::math::quantile(boost::math::normal_distribution<double>(), 0.75);
  Eigen::VectorXd col, dev;
  std::vector<double> buf;
  for (Index j = 0; j < p; ++j) {
    col = x.col(j);
    const double m = median_of(col.data(), n, buf);
    dev = (col.array() - m).abs();
    double sc = median_of(dev.data(), n, buf) / q75;
    if (!(sc > 0.0)) sc = std::sqrt((col.array() - col.mean()).square().mean());
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

struct StepWork {
  Eigen::MatrixXd linv_t, y;  // L^-T of the fit; one chunk of whitened rows
  Eigen::VectorXd shift, d2;  // L^-1 mean; squared distances
  std::vector<double> select;
  std::vector<Index> below, rows, tied;
  Eigen::MatrixXd g, g2;  // gathered, shifted rows
  std::vector<Index> enter, leave;
};

// d2_i = |L^-1 z_i - L^-1 mean|^2 for every row: chunks of rows times L^-T
// straight from z (one GEMM each, no centred copy), then the shift per column.
void distances(const Eigen::MatrixXd& z, const SubsetFit& fit, StepWork& w) {
  const Index n = z.rows(), p = z.cols();
  constexpr Index kChunk = 1024;  // rows; a chunk of y stays in cache
  w.linv_t = fit.linv.transpose();
  w.shift.noalias() = fit.linv * fit.mean;
  w.d2.resize(n);
  w.y.resize(std::min(kChunk, n), p);
  for (Index s = 0; s < n; s += kChunk) {
    const Index m = std::min(kChunk, n - s);
    auto y = w.y.topRows(m);
    y.noalias() = z.middleRows(s, m) * w.linv_t;
    auto d = w.d2.segment(s, m).array();
    d = (y.col(0).array() - w.shift(0)).square();
    for (Index j = 1; j < p; ++j) d += (y.col(j).array() - w.shift(j)).square();
  }
}

// mcd_detail::smallest_h() with the same output (the h smallest d2, ascending
// by row, ties at the cut broken by the rows' values), into w.rows.
void smallest_h_into(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z, StepWork& w) {
  const Index n = d2.size();
  const double cut = h == 1 ? d2.minCoeff() : order_statistics(d2.data(), n, h - 1, w.select).at;
  if (w.below.size() < static_cast<std::size_t>(n) + 1) w.below.resize(static_cast<std::size_t>(n) + 1);
  std::size_t below = 0;
  for (Index i = 0; i < n; ++i) {  // branch-free collection of the rows below the cut
    w.below[below] = i;
    below += d2(i) < cut;
  }
  w.rows.assign(w.below.begin(), w.below.begin() + static_cast<std::ptrdiff_t>(below));
  const std::size_t need = static_cast<std::size_t>(h) - below;
  w.tied.clear();
  for (Index i = 0; i < n; ++i)
    if (d2(i) == cut) w.tied.push_back(i);
  if (w.tied.size() > need) {
    // Ties at the cut are broken by the values of the rows, not by row order.
    std::sort(w.tied.begin(), w.tied.end(), [&z](Index a, Index b) {
      for (Index j = 0; j < z.cols(); ++j)
        if (z(a, j) != z(b, j)) return z(a, j) < z(b, j);
      return a < b;
    });
    w.tied.resize(need);
    std::sort(w.tied.begin(), w.tied.end());
  }
  const auto mid = static_cast<std::ptrdiff_t>(w.rows.size());
  w.rows.insert(w.rows.end(), w.tied.begin(), w.tied.end());
  std::inplace_merge(w.rows.begin(), w.rows.begin() + mid, w.rows.end());
}

void factor_fit(SubsetFit& f);

// mcd_detail::fit_subset() in one pass over the rows: chunks of rows are
// gathered, shifted by the subset's first row (so that no large common offset
// cancels) and accumulated by a rank update; the mean and covariance follow
// from the shifted sums. The result depends only on the set of rows, so two
// candidates holding the same subset get the same determinant. Same
// positive-definiteness and exact-fit tests as fit_subset().
SubsetFit fit_rows(const Eigen::MatrixXd& z, const std::vector<Index>& rows, StepWork& w) {
  const Index k = static_cast<Index>(rows.size()), p = z.cols();
  constexpr Index kChunk = 256;
  SubsetFit f;
  f.rows = rows;
  const Eigen::RowVectorXd shift = z.row(rows.front());
  Eigen::RowVectorXd sum = Eigen::RowVectorXd::Zero(p);
  Eigen::MatrixXd cross = Eigen::MatrixXd::Zero(p, p);
  w.g.resize(std::min(kChunk, k), p);
  for (Index s = 0; s < k; s += kChunk) {
    const Index m = std::min(kChunk, k - s);
    auto g = w.g.topRows(m);
    for (Index j = 0; j < p; ++j) {
      const double* src = z.col(j).data();
      const double sj = shift(j);
      double* dst = g.col(j).data();
      for (Index i = 0; i < m; ++i) dst[i] = src[rows[static_cast<std::size_t>(s + i)]] - sj;
    }
    sum += g.colwise().sum();
    cross.selfadjointView<Eigen::Lower>().rankUpdate(g.transpose());
  }
  const Eigen::RowVectorXd d = sum / static_cast<double>(k);  // mean - shift
  f.mean = (shift + d).transpose();
  f.cov = cross / static_cast<double>(k);
  f.cov.selfadjointView<Eigen::Lower>().rankUpdate(d.transpose(), -1.0);
  f.cov = f.cov.selfadjointView<Eigen::Lower>();
  factor_fit(f);
  return f;
}

// Cholesky factor, L^-1, determinant and exact-fit test of a fit whose mean
// and covariance are set (as at the end of fit_subset()).
void factor_fit(SubsetFit& f) {
  const Index p = f.cov.rows();
  bool regular = f.chol.compute(f.cov);
  // As fit_subset(): lambda_min >= 1 / |L^-1|_F^2 clears most subsets cheaply.
  if (regular) {
    f.linv = f.chol.lower().triangularView<Eigen::Lower>().solve(Eigen::MatrixXd::Identity(p, p));
    if (!(1.0 / f.linv.squaredNorm() > mcd_detail::kExactFitEigenvalue)) {
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(f.cov, Eigen::EigenvaluesOnly);
      regular = es.eigenvalues()(0) > mcd_detail::kExactFitEigenvalue;
    }
  }
  f.singular = !regular;
  f.log_det = regular ? f.chol.log_determinant() : -std::numeric_limits<double>::infinity();
}

// The fit of `rows` from the fit `old` of another subset of the same size
// that shares most rows: with D = rows entering, E = rows leaving and m the
// old mean, sum_new (z-m)(z-m)' = k cov_old + sum_D (z-m)(z-m)' - sum_E (z-m)(z-m)',
// then the shift to the new mean. Work grows with |D| + |E|, not with k, which
// is what makes the many late C-steps on the full data cheap (they move a
// few rows). Returns false (and leaves f alone) when the update is not worth it.
bool update_fit(const Eigen::MatrixXd& z, const SubsetFit& old, const std::vector<Index>& rows,
                StepWork& w, SubsetFit& f) {
  const Index k = static_cast<Index>(rows.size()), p = z.cols();
  if (old.singular || static_cast<Index>(old.rows.size()) != k) return false;
  w.enter.clear();
  w.leave.clear();
  std::set_difference(rows.begin(), rows.end(), old.rows.begin(), old.rows.end(), std::back_inserter(w.enter));
  std::set_difference(old.rows.begin(), old.rows.end(), rows.begin(), rows.end(), std::back_inserter(w.leave));
  const Index changed = static_cast<Index>(w.enter.size() + w.leave.size());
  if (changed == 0 || changed > k / 8) return false;
  auto gather = [&](const std::vector<Index>& r, Eigen::MatrixXd& g) {
    g.resize(static_cast<Index>(r.size()), p);
    for (Index j = 0; j < p; ++j)
      for (std::size_t i = 0; i < r.size(); ++i) g(static_cast<Index>(i), j) = z(r[i], j) - old.mean(j);
  };
  gather(w.enter, w.g);
  gather(w.leave, w.g2);
  Eigen::MatrixXd cross = static_cast<double>(k) * old.cov;
  cross.selfadjointView<Eigen::Lower>().rankUpdate(w.g.transpose());
  cross.selfadjointView<Eigen::Lower>().rankUpdate(w.g2.transpose(), -1.0);
  const Eigen::RowVectorXd d = (w.g.colwise().sum() - w.g2.colwise().sum()) / static_cast<double>(k);
  f.rows = rows;
  f.mean = old.mean + d.transpose();
  f.cov = cross / static_cast<double>(k);
  f.cov.selfadjointView<Eigen::Lower>().rankUpdate(d.transpose(), -1.0);
  f.cov = f.cov.selfadjointView<Eigen::Lower>();
  factor_fit(f);
  return true;
}

// One C-step (Rousseeuw & Van Driessen 1999, Theorem 1), as mcd_detail::c_step:
// false when the subset repeats (a fixed point) or the determinant would rise
// (rounding between equal-determinant subsets).
bool c_step(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, StepWork& w) {
  distances(z, fit, w);
  smallest_h_into(w.d2, h, z, w);
  if (w.rows == fit.rows) return false;
  // Few rows changed: update the fit; a singular update is recomputed from
  // the rows so that exact fits are judged as fit_subset() judges them.
  SubsetFit next;
  if (!update_fit(z, fit, w.rows, w, next) || next.singular) next = fit_rows(z, w.rows, w);
  if (!next.singular && static_cast<Index>(fit.rows.size()) == h && next.log_det > fit.log_det)
    return false;
  fit = std::move(next);
  return true;
}

// The search state shared by the stages.
struct Search {
  const Eigen::MatrixXd& z;  // standardised full data
  Index h;
  const FastMcdOptions& opt;
  Sampler rng;
  int iterations = 0;
  int starts = 0;
  std::optional<SubsetFit> exact;  // set once an exact fit of the full data is found
  StepWork work;
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
    do r = s.rng.below(ns);
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
std::vector<Candidate> run_starts(Search& s, const Eigen::MatrixXd& zs, Index hs, int n_starts,
                                  int& order) {
  std::vector<Candidate> out;
  for (int k = 0; k < n_starts && !s.exact; ++k) {
    std::optional<SubsetFit> f = random_start(s, zs, hs);
    ++s.starts;
    if (!f) continue;
    for (int step = 0; step < s.opt.initial_csteps && !f->singular; ++step) {
      ++s.iterations;
      if (!c_step(zs, hs, *f, s.work)) break;
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
void refine(Search& s, const Eigen::MatrixXd& zs, Index hs, std::vector<Candidate>& c, int steps,
            bool from_other_stage) {
  const double inf = std::numeric_limits<double>::infinity();
  if (from_other_stage)
    for (auto& cand : c) {
      cand.fit.rows.clear();
      cand.fit.log_det = inf;
    }
  const int cap = steps < 0 ? s.opt.max_csteps : steps;
  std::vector<char> done(c.size(), 0), dropped(c.size(), 0);
  for (int step = 0; step < cap && !s.exact; ++step) {
    bool all_done = true;
    for (std::size_t k = 0; k < c.size(); ++k) {
      if (done[k]) continue;
      ++s.iterations;
      const bool changed = c_step(zs, hs, c[k].fit, s.work);
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
  if (o.starts < 1 || o.best_kept < 1 || o.initial_csteps < 0 || o.max_csteps < 1 ||
      o.group_size < 2 || o.max_groups < 1 || o.nested_threshold < 1 || o.full_data_rows < 1)
    throw Error(ErrorKind::Argument, "FAST-MCD: starts, best_kept, max_csteps, group_size, max_groups, full_data_rows must be positive");
}

}  // namespace

RobustFit univariate_mcd(DataView x, double alpha, double reweight_level) {
  mcd_detail::check_input(x, alpha, true, "univariate MCD");
  if (x.cols() != 1) throw Error(ErrorKind::Shape, "univariate MCD: data must have one column");
  const Index n = x.rows();
  const Index h = mcd_subset_size(n, 1, alpha);
  const mcd_detail::Standardised s = standardise_mad(x);
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
  RobustFit r = f.singular ? mcd_detail::exact_fit_result(x, s, f, h)
                           : mcd_detail::finish_fit(x, s, f, h, reweight_level);
  r.starts = 1;
  return r;
}

// Rousseeuw & Van Driessen (1999), FAST-MCD.
RobustFit fast_mcd(DataView x, const FastMcdOptions& opt) {
  check_options(opt);
  mcd_detail::check_input(x, opt.alpha, true, "FAST-MCD");
  const Index n = x.rows(), p = x.cols();
  if (p == 1) return univariate_mcd(x, opt.alpha, opt.reweight_level);
  const Index h = mcd_subset_size(n, p, opt.alpha);
  mcd_detail::report_progress(opt.progress, "standardise", 0.0);
  const mcd_detail::Standardised st = standardise_mad(x);
  if (st.constant_column >= 0) return mcd_detail::constant_column_result(x, st, h);

  std::vector<Index> all(static_cast<std::size_t>(n));
  std::iota(all.begin(), all.end(), Index{0});
  if (h == n) {
    const SubsetFit f = mcd_detail::fit_subset(st.z, all);
    return f.singular ? mcd_detail::exact_fit_result(x, st, f, h)
                      : mcd_detail::finish_fit(x, st, f, h, opt.reweight_level);
  }

  Search s{st.z, h, opt, Sampler(opt.seed), 0, 0, std::nullopt, {}};
  std::vector<Candidate> cands;
  int order = 0;
  if (n <= opt.nested_threshold) {
    mcd_detail::report_progress(opt.progress, "random starts", 0.05);
    cands = run_starts(s, st.z, h, opt.starts, order);
  } else {
    // Nested scheme: up to max_groups disjoint random groups of about
    // group_size rows, starts inside each, then the pooled groups.
    const Index groups = std::max<Index>(1, std::min<Index>(opt.max_groups, n / opt.group_size));
    const Index pool_size = std::min(n, groups * opt.group_size);
    std::vector<Index> perm = all;
    for (Index k = 0; k < pool_size; ++k)  // partial Fisher-Yates
      std::swap(perm[static_cast<std::size_t>(k)], perm[static_cast<std::size_t>(k + s.rng.below(n - k))]);
    std::vector<Index> pool(perm.begin(), perm.begin() + pool_size);
    const int starts_per_group = std::max(1, opt.starts / static_cast<int>(groups));
    std::vector<Candidate> pooled;
    for (Index g = 0; g < groups && !s.exact; ++g) {
      mcd_detail::report_progress(opt.progress, "random starts in groups",
                                  0.05 + 0.5 * static_cast<double>(g) / static_cast<double>(groups));
      const Index lo = g * pool_size / groups, hi = (g + 1) * pool_size / groups;
      const Eigen::MatrixXd zg = gather_rows(st.z, std::vector<Index>(pool.begin() + lo, pool.begin() + hi));
      std::vector<Candidate> best = run_starts(s, zg, scaled_h(hi - lo, h, n), starts_per_group, order);
      for (auto& c : best) pooled.push_back(std::move(c));
    }
    if (!s.exact) {
      mcd_detail::report_progress(opt.progress, "pooled groups", 0.6);
      const Eigen::MatrixXd zp = gather_rows(st.z, pool);
      refine(s, zp, scaled_h(pool_size, h, n), pooled, opt.initial_csteps, true);
      // The m_full best pooled results go on to the full data (Rousseeuw &
      // Van Driessen 1999, nested extensions: m_full depends on n).
      const Index m_full = std::clamp<Index>(opt.full_data_rows / n, 1, opt.best_kept);
      keep_best(pooled, static_cast<int>(m_full));
      cands = std::move(pooled);
    }
  }
  if (!s.exact) {
    mcd_detail::report_progress(opt.progress, "C-steps on all rows", 0.7);
    refine(s, st.z, h, cands, -1, n > opt.nested_threshold);
    keep_best(cands, 1);
    // The winner's fit may come from updates (update_fit): report the fit
    // computed from its rows.
    if (!cands.empty()) {
      SubsetFit fresh = fit_rows(st.z, cands.front().fit.rows, s.work);
      if (fresh.singular)
        note_singular(s, st.z, fresh);
      else
        cands.front().fit = std::move(fresh);
    }
  }
  mcd_detail::report_progress(opt.progress, "reweighting", 0.95);
  RobustFit r;
  if (s.exact) {
    r = mcd_detail::exact_fit_result(x, st, *s.exact, h);
  } else if (cands.empty()) {
    throw Error(ErrorKind::Data, "FAST-MCD: no start gave a nonsingular subset (internal error)");
  } else {
    r = mcd_detail::finish_fit(x, st, cands.front().fit, h, opt.reweight_level);
  }
  r.iterations = s.iterations;
  r.starts = s.starts;
  mcd_detail::report_progress(opt.progress, "done", 1.0);
  return r;
}

}  // namespace ellipsa::core
