#include "mcd_common.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <utility>

#include "distributions.hpp"
#include "error.hpp"
#include "moments.hpp"
#include "parallel.hpp"
#include "order_statistics.hpp"
#include "robust_scale.hpp"

namespace ellipsa::core {

Index mcd_subset_size(Index n, Index p, double alpha) {
  if (!(alpha >= 0.5 && alpha <= 1.0))
    throw Error(ErrorKind::Argument, "MCD: alpha must lie in [0.5, 1] (got " + std::to_string(alpha) + ")");
  const Index half = (n + p + 1) / 2;
  const double h = std::floor(static_cast<double>(2 * half - n) + 2.0 * static_cast<double>(n - half) * alpha);
  return std::clamp<Index>(static_cast<Index>(h), std::min(half, n), n);
}

// Croux & Haesbroeck (1999): the covariance of the fraction q = h/n of a
// normal sample nearest the centre estimates F_{p+2}(chi2q(p, q))/q times Sigma.
double mcd_consistency_factor(Index h, Index n, Index p) {
  if (h >= n) return 1.0;
  const double q = static_cast<double>(h) / static_cast<double>(n);
  const double pd = static_cast<double>(p);
  return q / chi2_cdf(chi2_quantile(q, pd), pd + 2.0);
}

double reweight_consistency_factor(double level, Index p) {
  if (!(level > 0.0 && level < 1.0)) throw Error(ErrorKind::Argument, "MCD: reweighting level must lie in (0, 1)");
  const double pd = static_cast<double>(p);
  return level / chi2_cdf(chi2_quantile(level, pd), pd + 2.0);
}

namespace mcd_detail {

void report_progress(const ProgressCallback& cb, const char* stage, double fraction) {
  if (cb && !cb(stage, fraction))
    throw Error(ErrorKind::Cancelled, std::string("cancelled by the progress callback during ") + stage);
}

void check_input(DataView x, double alpha, bool need_more_rows, const char* method) {
  const Index n = x.rows(), p = x.cols();
  const std::string m(method);
  if (p < 1) throw Error(ErrorKind::Shape, m + ": data have no columns");
  if (n < 2) throw Error(ErrorKind::Data, m + ": needs at least 2 rows");
  if (need_more_rows && n <= p)
    throw Error(ErrorKind::Data, m + ": needs more rows than columns (n = " + std::to_string(n) +
                                     ", p = " + std::to_string(p) + "); for p >= n use the regularised MCD (MRCD)");
  if (!(alpha >= 0.5 && alpha <= 1.0))
    throw Error(ErrorKind::Argument, m + ": alpha must lie in [0.5, 1] (got " + std::to_string(alpha) + ")");
  if (!x.allFinite())
    throw Error(ErrorKind::Data,
                m + ": data contain NaN or infinite values; drop incomplete rows first (complete_rows)");
  bool all_identical = true;
  for (Index j = 0; j < p && all_identical; ++j) all_identical = x.col(j).minCoeff() == x.col(j).maxCoeff();
  if (all_identical) throw Error(ErrorKind::Data, m + ": all rows are identical; no scatter can be estimated");
}

double column_scale(ColumnScale kind, const Eigen::Ref<const Eigen::VectorXd>& x, ScaleWorkspace& workspace) {
  switch (kind) {
    case ColumnScale::Qn: return qn_scale(x, workspace);
    case ColumnScale::Tau: return tau_scale(x, workspace);
    case ColumnScale::Mad: break;
  }
  std::vector<double> dev, buf;
  return mad_about(x.data(), x.size(), median_of(x.data(), x.size(), buf), dev, buf);
}

Standardised standardise(DataView x, ColumnScale kind, int threads) {
  const Index n = x.rows(), p = x.cols();
  Standardised s;
  s.centre.resize(p);
  s.scale.resize(p);
  s.z.resize(n, p);
  // One column per task, each with its own buffers; the first constant column
  // and the first refused one are taken in column order afterwards (and
  // parallel_for rethrows the lowest column's error), so nothing depends on
  // the thread count.
  struct Buffers {
    Eigen::VectorXd col;
    std::vector<double> dev, buf;
    ScaleWorkspace workspace;
  };
  // Sized here, on the calling thread, not in the tasks (CStepWorkspace::reserve says why).
  std::vector<Buffers> buffers(static_cast<std::size_t>(parallel_workers(threads, p)));
  for (Buffers& b : buffers) {
    b.col.resize(n);
    b.dev.reserve(static_cast<std::size_t>(n));
    b.buf.reserve(static_cast<std::size_t>(n) + 2048);  // order_statistics' copy and sample
  }
  std::vector<char> constant(static_cast<std::size_t>(p), 0);
  parallel_for(threads, p, [&](Index j, int worker) {
    Buffers& b = buffers[static_cast<std::size_t>(worker)];
    Eigen::VectorXd& col = b.col;
    col = x.col(j);
    const double m = median_of(col.data(), n, b.buf);
    double sc =
        kind == ColumnScale::Mad ? mad_about(col.data(), n, m, b.dev, b.buf) : column_scale(kind, col, b.workspace);
    if (!(sc > 0.0)) {
      // More than half the values coincide: fall back to the standard deviation
      // (the C-steps then find the exact fit if h rows share that value).
      sc = std::sqrt((col.array() - col.mean()).square().mean());
    }
    if (!(sc > 0.0)) {
      sc = 1.0;
      constant[static_cast<std::size_t>(j)] = 1;
    }
    s.centre(j) = m;
    s.scale(j) = sc;
    s.z.col(j) = (col.array() - m) / sc;
    // Finite data can still leave the range of double here: a difference of two
    // values near +-1e308 overflows, and so does a deviation divided by a tiny
    // scale. Later steps would turn the infinities into NaN (an empty exact-fit
    // plane, a NaN scatter), so the column is refused now.
    if (!std::isfinite(sc) || !s.z.col(j).allFinite())
      throw LocatedError(ErrorKind::Data, "robust standardisation", -1, j,
                         "has values whose spread overflows double precision; rescale the data");
  });
  for (Index j = 0; j < p && s.constant_column < 0; ++j)
    if (constant[static_cast<std::size_t>(j)]) s.constant_column = j;
  return s;
}

void factor_fit(SubsetFit& f) {
  const Index p = f.cov.rows();
  bool regular = f.chol.compute(f.cov);
  // lambda_min >= 1 / trace(cov^-1) = 1 / |L^-1|_F^2 >= lambda_min / p: a cheap
  // lower bound clears most subsets; only doubtful ones pay for eigenvalues.
  if (regular) {
    f.linv = f.chol.lower().triangularView<Eigen::Lower>().solve(Eigen::MatrixXd::Identity(p, p));
    if (!(1.0 / f.linv.squaredNorm() > kExactFitEigenvalue)) {
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(f.cov, Eigen::EigenvaluesOnly);
      regular = es.eigenvalues()(0) > kExactFitEigenvalue;
    }
  }
  f.singular = !regular;
  f.log_det = regular ? f.chol.log_determinant() : -std::numeric_limits<double>::infinity();
}

SubsetFit fit_subset(const Eigen::MatrixXd& z, std::vector<Index> rows) {
  SubsetFit f;
  f.rows = std::move(rows);
  const Index k = static_cast<Index>(f.rows.size()), p = z.cols();
  // Gather column by column: z is column-major, so each column's reads stay
  // within one contiguous array.
  Eigen::MatrixXd g(k, p);
  for (Index j = 0; j < p; ++j) {
    const double* src = z.col(j).data();
    double* dst = g.col(j).data();
    for (Index i = 0; i < k; ++i) dst[i] = src[f.rows[static_cast<std::size_t>(i)]];
  }
  f.mean = g.colwise().mean().transpose();
  g.rowwise() -= f.mean.transpose();
  // Lower triangle by a rank-k update (half the work of g'g), then mirrored.
  f.cov.setZero(p, p);
  f.cov.selfadjointView<Eigen::Lower>().rankUpdate(g.transpose());
  f.cov /= static_cast<double>(k);
  f.cov = f.cov.selfadjointView<Eigen::Lower>();
  factor_fit(f);
  return f;
}

void fit_rows(const Eigen::MatrixXd& z, SubsetFit& f, CStepWorkspace& w) {
  const std::vector<Index>& rows = f.rows;
  const Index k = static_cast<Index>(rows.size()), p = z.cols();
  constexpr Index kChunk = 256;  // rows per gathered chunk (stays in cache)
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
}

bool update_fit(const Eigen::MatrixXd& z, const SubsetFit& old, SubsetFit& f, CStepWorkspace& w) {
  const std::vector<Index>& rows = f.rows;
  const Index k = static_cast<Index>(rows.size()), p = z.cols();
  if (old.singular || static_cast<Index>(old.rows.size()) != k) return false;
  // Rows entering and leaving in one merge of the two ascending lists (most
  // rows are in both, so the branches are predictable); stop as soon as so
  // many changed that a recomputation is the better choice.
  w.enter.clear();
  w.leave.clear();
  const std::size_t limit = static_cast<std::size_t>(k / 8);
  auto a = rows.begin(), b = old.rows.begin();
  while (a != rows.end() && b != old.rows.end()) {
    if (*a < *b) {
      w.enter.push_back(*a++);
    } else if (*b < *a) {
      w.leave.push_back(*b++);
    } else {
      ++a;
      ++b;
      continue;
    }
    if (w.enter.size() + w.leave.size() > limit) return false;
  }
  w.enter.insert(w.enter.end(), a, rows.end());
  w.leave.insert(w.leave.end(), b, old.rows.end());
  const std::size_t changed = w.enter.size() + w.leave.size();
  if (changed == 0 || changed > limit) return false;
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
  f.mean = old.mean + d.transpose();
  f.cov = cross / static_cast<double>(k);
  f.cov.selfadjointView<Eigen::Lower>().rankUpdate(d.transpose(), -1.0);
  f.cov = f.cov.selfadjointView<Eigen::Lower>();
  factor_fit(f);
  return true;
}

void CStepWorkspace::reserve(Index n, Index p) {
  constexpr Index kChunk = 1024;      // subset_distances' chunk
  constexpr Index kSelectPad = 2048;  // order_statistics' sample, kept after the copy
  if (d2.size() != n) d2.resize(n);
  select.reserve(static_cast<std::size_t>(n + kSelectPad));
  below.reserve(static_cast<std::size_t>(n) + 1);
  rows.reserve(static_cast<std::size_t>(n));
  // One block per thread subset_distances will run on (one below kMinChunksForThreads chunks).
  const Index chunks = chunk_count(n, kChunk);
  const auto slots = static_cast<std::size_t>(parallel_workers(chunks >= kMinChunksForThreads ? threads : 1, chunks));
  if (worker_y.size() < slots) worker_y.resize(slots);
  for (auto& y : worker_y)
    if (y.rows() < std::min(kChunk, n) || y.cols() != p) y.resize(std::min(kChunk, n), p);
}

void subset_distances(const Eigen::MatrixXd& z, const SubsetFit& fit, CStepWorkspace& w) {
  const SubsetFit* const fits[] = {&fit};
  Eigen::VectorXd* const out[] = {&w.d2};
  subset_distances(z, fits, out, w);
}

void subset_distances(const Eigen::MatrixXd& z, std::span<const SubsetFit* const> fits,
                      std::span<Eigen::VectorXd* const> d2, CStepWorkspace& w) {
  const Index n = z.rows(), p = z.cols();
  const auto m = static_cast<Index>(fits.size());
  if (d2.size() != fits.size()) throw Error(ErrorKind::Argument, "subset distances: one output per fit");
  constexpr Index kChunk = 1024;  // rows; a chunk of y stays in cache
  // The fits side by side: one GEMM per chunk whitens the rows for all of
  // them, so each chunk of z is read once however many fits there are (a
  // wider product also runs nearer the BLAS kernel's speed: 6 fits at
  // p = 10 took 0.87 ms per fit against 1.12 ms one by one, measured here).
  w.linv_t.resize(p, p * m);
  w.shift.resize(p * m);
  for (Index f = 0; f < m; ++f) {
    const SubsetFit& fit = *fits[static_cast<std::size_t>(f)];
    w.linv_t.middleCols(f * p, p) = fit.linv.transpose();
    w.shift.segment(f * p, p).noalias() = fit.linv * fit.mean;
    d2[static_cast<std::size_t>(f)]->resize(n);
  }
  // Fixed chunks of rows, each row's distance from its own row only: the same
  // values on any number of threads.
  const Index chunks = chunk_count(n, kChunk);
  const int threads = chunks >= kMinChunksForThreads ? w.threads : 1;
  const int workers = parallel_workers(threads, chunks);
  if (static_cast<int>(w.worker_y.size()) < workers) w.worker_y.resize(static_cast<std::size_t>(workers));
  // Blocks sized here, on the calling thread (CStepWorkspace::reserve says why).
  for (int k = 0; k < workers; ++k) {
    Eigen::MatrixXd& buffer = w.worker_y[static_cast<std::size_t>(k)];
    if (buffer.rows() < std::min(kChunk, n) || buffer.cols() < p * m) buffer.resize(std::min(kChunk, n), p * m);
  }
  parallel_for(threads, chunks, [&](Index c, int worker) {
    const Index s = c * kChunk;
    const Index rows = std::min(kChunk, n - s);
    auto y = w.worker_y[static_cast<std::size_t>(worker)].topLeftCorner(rows, p * m);
    y.noalias() = z.middleRows(s, rows) * w.linv_t;  // plain GEMM: faster than a triangular product
    for (Index f = 0; f < m; ++f) {
      auto d = d2[static_cast<std::size_t>(f)]->segment(s, rows).array();
      d = (y.col(f * p).array() - w.shift(f * p)).square();
      for (Index j = 1; j < p; ++j) d += (y.col(f * p + j).array() - w.shift(f * p + j)).square();
    }
  });
}

void smallest_h_into(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z, CStepWorkspace& w) {
  const Index n = d2.size();
  const double cut = order_statistics(d2.data(), n, h - 1, w.select).at;
  if (w.below.size() < static_cast<std::size_t>(n) + 1) w.below.resize(static_cast<std::size_t>(n) + 1);
  // One branch-free pass (about half the rows are taken, unpredictably): the
  // rows at or below the cut, ascending, and how many lie strictly below.
  std::size_t taken = 0, below = 0;
  for (Index i = 0; i < n; ++i) {
    w.below[taken] = i;
    taken += d2(i) <= cut;
    below += d2(i) < cut;
  }
  // Fewer than h rows at or below the cut: some distances are NaN (whitened
  // rows that overflowed, e.g. values near 1e308). Padding the subset would
  // repeat a row (found by fuzzing: a model whose h-subset did not load).
  if (taken < static_cast<std::size_t>(h))
    throw Error(ErrorKind::Data,
                "distances of the rows are not finite: the values are too large in magnitude for double "
                "precision; rescale the columns");
  const auto first = w.below.begin();
  if (taken == static_cast<std::size_t>(h)) {  // the usual case: no surplus ties at the cut
    w.rows.assign(first, first + h);
    return;
  }
  // More rows sit at the cut than places are left: they are taken in
  // lexicographic order of their values, not by row order.
  const std::size_t need = static_cast<std::size_t>(h) - below;
  w.rows.clear();
  w.tied.clear();
  for (auto it = first; it != first + static_cast<std::ptrdiff_t>(taken); ++it)
    (d2(*it) == cut ? w.tied : w.rows).push_back(*it);
  std::sort(w.tied.begin(), w.tied.end(), [&z](Index a, Index b) {
    for (Index j = 0; j < z.cols(); ++j)
      if (z(a, j) != z(b, j)) return z(a, j) < z(b, j);
    return a < b;
  });
  w.tied.resize(need);
  std::sort(w.tied.begin(), w.tied.end());
  const auto mid = static_cast<std::ptrdiff_t>(w.rows.size());
  w.rows.insert(w.rows.end(), w.tied.begin(), w.tied.end());
  std::inplace_merge(w.rows.begin(), w.rows.begin() + mid, w.rows.end());
}

std::vector<Index> smallest_h(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z) {
  CStepWorkspace w;
  smallest_h_into(d2, h, z, w);
  return std::move(w.rows);
}

bool c_step(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, CStepWorkspace& w) {
  subset_distances(z, fit, w);
  return c_step_from_distances(z, h, fit, w.d2, w);
}

bool c_step_from_distances(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, const Eigen::VectorXd& d2,
                           CStepWorkspace& w) {
  smallest_h_into(d2, h, z, w);
  if (w.rows == fit.rows) return false;
  // The new rows travel by swapping buffers (w.rows <-> next.rows <-> the old
  // fit's rows), so no step allocates a row list.
  SubsetFit next;
  next.rows.swap(w.rows);
  // Few rows changed: update the fit; a singular update is recomputed from
  // the rows so that exact fits are judged as fit_subset() judges them.
  if (!update_fit(z, fit, next, w) || next.singular) fit_rows(z, next, w);
  // The determinant cannot increase (Rousseeuw & Van Driessen 1999, Theorem 1);
  // a rise can only be rounding between equal-determinant subsets: stop there.
  // (Only comparable when the current subset has h rows too: starts are smaller.)
  const bool accept = next.singular || static_cast<Index>(fit.rows.size()) != h || !(next.log_det > fit.log_det);
  if (accept) std::swap(fit, next);
  w.rows.swap(next.rows);  // recycle the buffer of the fit not kept
  return accept;
}

int c_steps_to_convergence(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, int max_steps, int threads) {
  CStepWorkspace w;
  w.threads = threads;
  return c_steps_to_convergence(z, h, fit, max_steps, w);
}

int c_steps_to_convergence(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, int max_steps, CStepWorkspace& w) {
  int steps = 0;
  bool changed = false;
  while (steps < max_steps && !fit.singular) {
    ++steps;
    if (!c_step(z, h, fit, w)) break;
    changed = true;
  }
  if (changed && !fit.singular) fit = fit_subset(z, std::move(fit.rows));
  return steps;
}

std::optional<SubsetFit> exact_fit_subset(const Eigen::MatrixXd& z, const Eigen::MatrixXd& z_stage,
                                          const SubsetFit& singular_fit, Index h) {
  const Index p = z.cols();
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(singular_fit.cov);
  const Eigen::VectorXd a = es.eigenvectors().col(0);
  double tol = 1e-9 * std::sqrt(std::max(es.eigenvalues()(p - 1), 0.0));
  for (Index i : singular_fit.rows)
    tol = std::max(tol, std::abs((z_stage.row(i).transpose() - singular_fit.mean).dot(a)));
  const Eigen::VectorXd r2 = ((z.rowwise() - singular_fit.mean.transpose()) * a).array().square();
  if ((r2.array() <= tol * tol).count() < h) return std::nullopt;
  SubsetFit f = fit_subset(z, smallest_h(r2, h, z));
  if (!f.singular) return std::nullopt;  // h on the plane, but only within tolerance
  return f;
}

namespace {

Eigen::MatrixXd scale_both_sides(const Eigen::MatrixXd& m, const Eigen::VectorXd& d) {
  return d.asDiagonal() * m * d.asDiagonal();
}

// d2_i = |L^-1 (z_i - centre)|^2 for every row, L = chol.lower(): rows in
// chunks, centred first (no cancellation against L^-1 centre), then one GEMM
// per chunk with the explicit L^-T of the p x p factor. At p ~ 10 this is
// several times faster than triangular solves with n right-hand sides; the
// inverse of a well-conditioned triangular factor (the data are standardised)
// costs no accuracy that matters for flags at a chi-square cutoff.
// Fixed chunks of rows, each row's distance from its own row only: the same
// values on any number of threads.
Eigen::VectorXd centred_distances(const Eigen::MatrixXd& z, const Eigen::VectorXd& centre, const CholeskyFactor& chol,
                                  int threads) {
  const Index n = z.rows(), p = z.cols();
  const Eigen::MatrixXd linv_t =
      chol.lower().triangularView<Eigen::Lower>().solve(Eigen::MatrixXd::Identity(p, p)).transpose();
  constexpr Index kChunk = 1024;
  Eigen::VectorXd d2(n);
  const Index chunks = chunk_count(n, kChunk);
  if (chunks < kMinChunksForThreads) threads = 1;
  struct Buffers {
    Eigen::MatrixXd c, y;
  };
  std::vector<Buffers> buffers(static_cast<std::size_t>(parallel_workers(threads, chunks)));
  for (Buffers& b : buffers) {  // on the calling thread (CStepWorkspace::reserve says why)
    b.c.resize(std::min(kChunk, n), p);
    b.y.resize(std::min(kChunk, n), p);
  }
  parallel_for(threads, chunks, [&](Index chunk, int worker) {
    const Index s = chunk * kChunk, m = std::min(kChunk, n - s);
    Buffers& b = buffers[static_cast<std::size_t>(worker)];
    b.c.topRows(m) = z.middleRows(s, m).rowwise() - centre.transpose();
    b.y.topRows(m).noalias() = b.c.topRows(m) * linv_t;
    d2.segment(s, m) = b.y.topRows(m).rowwise().squaredNorm();
  });
  return d2;
}

}  // namespace

}  // namespace mcd_detail

std::optional<ReweightedEstimate> reweighted_estimate(const MomentAccumulator& kept, double factor) {
  const Index p = kept.dimension();
  if (kept.rows() <= p) return std::nullopt;
  ReweightedEstimate e;
  e.mean = kept.mean();
  e.scatter = factor * kept.covariance(Normalisation::ByCount);
  if (!e.factor.compute(e.scatter)) return std::nullopt;
  return e;
}

namespace mcd_detail {

RobustFit finish_fit(DataView x, const Standardised& s, const SubsetFit& best, Index h, const FinishRule& rule,
                     int threads) {
  const Index n = x.rows(), p = x.cols();
  const double level = rule.level;
  RobustFit r;
  r.h = h;
  r.h_subset = best.rows;
  r.reweight_level = level;
  r.raw_consistency = rule.raw;
  r.reweight_factor = reweight_consistency_factor(level, p);
  r.small_sample = rule.small_sample;
  // Distances are affine invariant: compute them on the standardised data.
  // They set the reweighting flags and RobustFit::raw_d2/robust_d2; the
  // distances users score rows with come from MahalanobisScorer (scoring.hpp)
  // on the returned location and scatter, not from here.
  const DataView zv = make_view(s.z);
  Eigen::VectorXd unscaled_d2;  // median rule: distances under the subset's own covariance
  if (rule.raw == RawConsistency::Median) {
    // Rousseeuw & Van Driessen (1999): scale so that the median distance of
    // all rows is the chi-square median (distances scale as 1/factor).
    CholeskyFactor unscaled;
    if (!unscaled.compute(best.cov))
      throw Error(ErrorKind::Singular, "MCD: raw scatter is not positive definite (internal error)");
    unscaled_d2 = centred_distances(s.z, best.mean, unscaled, threads);
    std::vector<double> buf;
    const double med = median_of(unscaled_d2.data(), n, buf);
    if (!(med > 0.0))
      throw Error(ErrorKind::Singular,
                  "MCD: half of the rows lie on the subset's centre; the median rescaling is undefined");
    r.consistency_factor = med / chi2_quantile(0.5, static_cast<double>(p));
    r.small_sample.raw = 1.0;
  } else {
    r.consistency_factor = mcd_consistency_factor(h, n, p);
  }
  // Pison, Van Aelst & Willems (2002): the consistency factor is exact only as
  // n grows; the small-sample factor removes the remaining bias of the raw
  // scatter before it chooses the rows to reweight.
  const double raw_factor = r.consistency_factor * r.small_sample.raw;
  if (rule.raw == RawConsistency::Median) {
    r.raw_d2 = unscaled_d2 / raw_factor;  // the distances above, scaled: no second pass
  } else {
    CholeskyFactor raw_chol;
    if (!raw_chol.compute(raw_factor * best.cov))
      throw Error(ErrorKind::Singular, "MCD: raw scatter is not positive definite (internal error)");
    r.raw_d2 = centred_distances(s.z, best.mean, raw_chol, threads);
  }
  r.raw_location = s.centre + s.scale.cwiseProduct(best.mean);
  r.raw_scatter = raw_factor * scale_both_sides(best.cov, s.scale);
  r.raw_log_det = best.log_det + 2.0 * s.scale.array().log().sum();
  const double cutoff = chi2_quantile(level, static_cast<double>(p));
  r.outlier.assign(static_cast<std::size_t>(n), false);
  Eigen::VectorXd w(n);
  for (Index i = 0; i < n; ++i) {
    const bool out = r.raw_d2(i) > cutoff;
    r.outlier[static_cast<std::size_t>(i)] = out;
    w(i) = out ? 0.0 : 1.0;
  }
  MomentAccumulator acc(p);
  acc.add(zv, w);  // the weighted moments: on the calling thread
  if (auto est = reweighted_estimate(acc, r.reweight_factor * rule.small_sample.reweighted)) {
    r.reweighted = true;
    r.location = s.centre + s.scale.cwiseProduct(est->mean);
    r.scatter = scale_both_sides(est->scatter, s.scale);
    r.robust_d2 = centred_distances(s.z, est->mean, est->factor, threads);
  }
  if (!r.reweighted) {
    r.location = r.raw_location;
    r.scatter = r.raw_scatter;
    r.robust_d2 = r.raw_d2;
  }
  return r;
}

namespace {
// The exact fit on the plane a'(z - t) = 0, a the unit normal in standardised
// units and t the subset's mean; lambda_max (the subset's largest eigenvalue)
// sets the scale of the on-plane tolerance. Callers choose the normal: the
// eigenvector of the smallest eigenvalue, or a constant column's axis.
RobustFit plane_fit_result(DataView x, const Standardised& s, const SubsetFit& subset, const Eigen::VectorXd& a,
                           double lambda_max, Index h) {
  const Index n = x.rows();
  // Residuals in standardised units, then the plane in original units:
  // a'(z - t) = (a./scale)'(x - T), so normal = (a./scale)/|a./scale|.
  Eigen::VectorXd rz = (s.z.rowwise() - subset.mean.transpose()) * a;
  double tol = 1e-9 * std::sqrt(std::max(lambda_max, 0.0));
  for (Index i : subset.rows) tol = std::max(tol, std::abs(rz(i)));
  const Eigen::VectorXd g = a.cwiseQuotient(s.scale);
  const double gnorm = g.norm();

  RobustFit r;
  r.exact_fit = true;
  r.h = h;
  r.h_subset = subset.rows;
  r.raw_log_det = -std::numeric_limits<double>::infinity();
  r.raw_location = s.centre + s.scale.cwiseProduct(subset.mean);
  r.raw_scatter = scale_both_sides(subset.cov, s.scale);
  Hyperplane& hp = r.hyperplane;
  hp.normal = g / gnorm;
  hp.offset = hp.normal.dot(r.raw_location);
  hp.residual = rz / gnorm;
  hp.tolerance = tol / gnorm;
  r.outlier.assign(static_cast<std::size_t>(n), true);
  std::vector<Index> on;
  for (Index i = 0; i < n; ++i)
    if (std::abs(rz(i)) <= tol) {
      on.push_back(i);
      r.outlier[static_cast<std::size_t>(i)] = false;
    }
  hp.rows_on = static_cast<Index>(on.size());
  // The subset's own rows set the tolerance, so they are on the plane unless a
  // residual is NaN: standardised values so large that their products overflow.
  if (on.empty())
    throw Error(ErrorKind::Data,
                "exact fit: the residuals to the hyperplane are not finite (the data's spread overflows double "
                "precision); rescale the data");
  const SubsetFit all_on = fit_subset(s.z, on);
  r.location = s.centre + s.scale.cwiseProduct(all_on.mean);
  r.scatter = scale_both_sides(all_on.cov, s.scale);
  return r;
}
}  // namespace

RobustFit exact_fit_result(DataView x, const Standardised& s, const SubsetFit& subset, Index h) {
  const Index p = x.cols();
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(subset.cov);
  return plane_fit_result(x, s, subset, es.eigenvectors().col(0), es.eigenvalues()(p - 1), h);
}

RobustFit constant_column_result(DataView x, const Standardised& s, Index h) {
  std::vector<Index> rows(static_cast<std::size_t>(h));
  for (Index i = 0; i < h; ++i) rows[static_cast<std::size_t>(i)] = i;
  const SubsetFit f = fit_subset(s.z, std::move(rows));
  // The constant column's axis is the normal, given directly: with other zero
  // eigenvalues (a doubly degenerate subset) an eigensolver could return any
  // vector of the null space. The column's standardised values are exactly 0
  // (standardise() gives it centre = the value, scale 1), so its row and
  // column of the scatter are exactly 0 too.
  const Index j = s.constant_column;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(f.cov, Eigen::EigenvaluesOnly);
  return plane_fit_result(x, s, f, Eigen::VectorXd::Unit(x.cols(), j), es.eigenvalues()(x.cols() - 1), h);
}

}  // namespace mcd_detail
}  // namespace ellipsa::core
