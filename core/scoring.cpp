#include "scoring.hpp"

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <numbers>
#include <string>
#include <utility>
#include <vector>

#include "distributions.hpp"
#include "error.hpp"
#include "missing.hpp"
#include "parallel.hpp"

namespace ellipsa::core {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Rows per block: the centred block (rows x p doubles) and its whitened copy stay
// in cache while the triangular solve runs at BLAS-3 speed.
constexpr Index kChunkRows = 1024;
// Spare rows in each column of a block, so that its leading dimension (1032
// doubles) is not a multiple of 4 KiB: with 1024, the p entries of one row
// fall in the same first-level cache set and a row-major copy into the block
// evicted itself (1e6 x 50: the copy took 3/4 of the time; measured in
// docs/performance.md).
constexpr Index kColumnPad = 8;

// What one factor needs to score a dense block of centred rows.
struct Model {
  const Eigen::MatrixXd* lower;       // L with S_oo = L L'
  Eigen::VectorXd inverse_diagonal;   // diag(S_oo^-1), only for conditional drops
  const std::vector<Index>* columns;  // observed columns, nullptr = all
};

Eigen::VectorXd inverse_diagonal(const Eigen::MatrixXd& lower) {
  // (S^-1)_jj = |L^-1 e_j|^2: the column norms of L^-1. Only the diagonal of
  // S^-1 is kept; it is needed for the closed-form conditional drop.
  Eigen::MatrixXd inv = Eigen::MatrixXd::Identity(lower.rows(), lower.rows());
  lower.triangularView<Eigen::Lower>().solveInPlace(inv);
  return inv.colwise().squaredNorm().transpose();
}

// Overwrites the m rows d_k of the column-major block w (leading dimension
// ld, q columns) with (L^-1 d_k)': one triangular solve from the right with
// U = L' whitens all m rows at once (d' U^-1 = (L^-1 d)'), with no transposed
// copy. (A column-by-column forward substitution in plain loops was measured
// against it: equal at p = 5, 1.4x slower at p = 20, 1.7x at p = 50.)
void whiten_rows(double* w, Index ld, Index m, const Eigen::MatrixXd& lower) {
  Eigen::Map<Eigen::MatrixXd, Eigen::Unaligned, Eigen::OuterStride<>> block(w, m, lower.rows(),
                                                                            Eigen::OuterStride<>(ld));
  lower.transpose().triangularView<Eigen::Upper>().solveInPlace<Eigen::OnTheRight>(block);
}

// d2[k] = sum_j w(k, j)^2, columns in ascending order.
void row_squared_norms(const double* w, Index ld, Index m, Index q, double* d2) {
  for (Index k = 0; k < m; ++k) d2[k] = 0.0;
  for (Index j = 0; j < q; ++j) {
    const double* wj = w + j * ld;
    for (Index k = 0; k < m; ++k) d2[k] += wj[k] * wj[k];
  }
}

// A finite row whose squared norm came out NaN or infinite is scored again
// in scaled units (whiten_scaled, core/cholesky.hpp): d2, and when asked the
// contributions d_j z_j and conditional drops z_j^2 / (S^-1)_jj (z = S^-1 d)
// of output row `row`. A row still NaN is refused (ErrorKind::Data).
ScaledWhitening checked_whiten_scaled(const Model& model, const Eigen::VectorXd& raw, const Eigen::VectorXd& mu,
                                      Index row) {
  ScaledWhitening r = whiten_scaled(*model.lower, raw, mu);
  if (std::isnan(r.squared_distance))
    throw Error(ErrorKind::Data, "scoring: the squared distance of row " + std::to_string(row) +
                                     " overflows even in scaled units (a scatter too ill-conditioned for it)");
  return r;
}

void rescore_scaled(const Model& model, const Eigen::VectorXd& raw, const Eigen::VectorXd& mu, Index row,
                    const ScoringOptions& opt, RowScores& out) {
  ScaledWhitening r = checked_whiten_scaled(model, raw, mu, row);
  out.d2(row) = r.squared_distance;
  if (!(opt.contributions || opt.conditional_drops)) return;
  model.lower->triangularView<Eigen::Lower>().solveInPlace<Eigen::OnTheRight>(r.w);  // w = (S^-1 d / s)'
  for (Index a = 0; a < r.w.size(); ++a) {
    const Index j = model.columns ? (*model.columns)[static_cast<std::size_t>(a)] : a;
    if (opt.contributions) out.contributions(row, j) = std::ldexp(r.d(a) * r.w(a), 2 * r.shift);
    if (opt.conditional_drops)
      out.conditional_drops(row, j) = std::ldexp(r.w(a) * r.w(a) / model.inverse_diagonal(a), 2 * r.shift);
  }
}

// block(k, j) = x(start + k, j) - location(j) for k < m, block column-major
// with leading dimension block.rows(). Row-major sources are read a row at a
// time, column-major ones a column at a time (both in memory order).
void copy_centred(DataView x, Index start, Index m, const Eigen::VectorXd& location, Eigen::MatrixXd& block) {
  const Index p = x.cols(), ld = block.rows();
  double* b = block.data();
  const double* mu = location.data();
  if (x.outerStride() == 1) {  // unit step between the columns of a row: row-major
    const Index step = x.innerStride();
    const double* row = x.data() + start * step;
    for (Index k = 0; k < m; ++k, row += step)
      for (Index j = 0; j < p; ++j) b[j * ld + k] = row[j] - mu[j];
  } else if (x.innerStride() == 1) {  // column-major
    for (Index j = 0; j < p; ++j) {
      const double* col = x.data() + j * x.outerStride() + start;
      for (Index k = 0; k < m; ++k) b[j * ld + k] = col[k] - mu[j];
    }
  } else {
    for (Index j = 0; j < p; ++j)
      for (Index k = 0; k < m; ++k) b[j * ld + k] = x(start + k, j) - mu[j];
  }
}

// The uncentred observed coordinates of output row `row` and their location
// entries, for rescore_scaled (called only for a row that overflowed).
using RawRowFetch = std::function<void(Index row, Eigen::VectorXd& raw, Eigen::VectorXd& mu)>;

void rescore_overflowed(const Model& model, const double* norms, Index m, const Index* rows, const RawRowFetch& fetch,
                        const ScoringOptions& opt, RowScores& out) {
  for (Index k = 0; k < m; ++k) {
    if (std::isfinite(norms[k])) continue;
    Eigen::VectorXd raw, mu;
    fetch(rows[k], raw, mu);
    rescore_scaled(model, raw, mu, rows[k], opt, out);
  }
}

// Scores `block` (m x q, already centred; overwritten) whose rows are output
// rows rows[0..m). `work` is scratch of at least m x q, used only when z is
// needed; `norms` of at least m.
void score_block(const Model& model, Eigen::Ref<Eigen::MatrixXd> block, Eigen::MatrixXd& work, double* norms,
                 const Index* rows, const RawRowFetch& fetch, const ScoringOptions& opt, RowScores& out) {
  const Index m = block.rows(), q = block.cols();
  if (!(opt.contributions || opt.conditional_drops)) {
    whiten_rows(block.data(), block.outerStride(), m, *model.lower);
    row_squared_norms(block.data(), block.outerStride(), m, q, norms);
    for (Index k = 0; k < m; ++k) out.d2(rows[k]) = norms[k];
    rescore_overflowed(model, norms, m, rows, fetch, opt, out);
    return;
  }
  auto w = work.topLeftCorner(m, q);
  w = block;
  whiten_rows(w.data(), w.outerStride(), m, *model.lower);
  row_squared_norms(w.data(), w.outerStride(), m, q, norms);
  for (Index k = 0; k < m; ++k) out.d2(rows[k]) = norms[k];
  // z' = (L^-1 d)' L^-1, i.e. z = L^-T L^-1 d = S^-1 d.
  model.lower->triangularView<Eigen::Lower>().solveInPlace<Eigen::OnTheRight>(w);
  for (Index a = 0; a < q; ++a) {
    const Index j = model.columns ? (*model.columns)[static_cast<std::size_t>(a)] : a;
    for (Index k = 0; k < m; ++k) {
      const double z = w(k, a);
      if (opt.contributions) out.contributions(rows[k], j) = block(k, a) * z;
      if (opt.conditional_drops) out.conditional_drops(rows[k], j) = z * z / model.inverse_diagonal(a);
    }
  }
  rescore_overflowed(model, norms, m, rows, fetch, opt, out);
}

[[noreturn]] void throw_infinite(Index row, Index col, double v) { throw_infinite_cell("scoring", row, col, v); }

}  // namespace

MahalanobisScorer::MahalanobisScorer(const Eigen::VectorXd& location, const Eigen::MatrixXd& scatter)
    : location_(location), scatter_(scatter) {
  if (scatter.rows() != scatter.cols() || scatter.rows() != location.size())
    throw Error(ErrorKind::Shape, "scorer: location has " + std::to_string(location.size()) + " entries, scatter is " +
                                      std::to_string(scatter.rows()) + " x " + std::to_string(scatter.cols()));
  if (location.size() == 0) throw Error(ErrorKind::Shape, "scorer: no variables");
  if (!location.allFinite()) throw Error(ErrorKind::Data, "scorer: location has a NaN or Inf entry");
  if (!factor_.compute(scatter))
    throw Error(ErrorKind::Singular,
                "scorer: scatter matrix is not positive definite (diagnose it for constant or collinear "
                "columns, or use a shrinkage estimate)");
}

MahalanobisScorer::MahalanobisScorer(const Eigen::VectorXd& location, const CholeskyFactor& factor)
    : location_(location), factor_(factor) {
  if (!factor.ok()) throw Error(ErrorKind::Singular, "scorer: the Cholesky factor is not valid");
  if (factor.dimension() != location.size() || location.size() == 0)
    throw Error(ErrorKind::Shape, "scorer: location and factor dimensions differ");
  if (!location.allFinite()) throw Error(ErrorKind::Data, "scorer: location has a NaN or Inf entry");
}

RowScores MahalanobisScorer::score(DataView x, const ScoringOptions& opt) const {
  const Index n = x.rows(), p = dimension();
  if (x.cols() != p)
    throw Error(ErrorKind::Shape,
                "scorer: data have " + std::to_string(x.cols()) + " columns, model has " + std::to_string(p));
  if (!(opt.level > 0.0 && opt.level < 1.0)) throw Error(ErrorKind::Argument, "scorer: level must lie in (0, 1)");

  RowScores out;
  out.d2.resize(n);
  out.df = IndexVector::Constant(n, p);
  if (opt.contributions) out.contributions.setConstant(n, p, kNaN);
  if (opt.conditional_drops) out.conditional_drops.setConstant(n, p, kNaN);
  // log det S_oo per row (NaN: nothing observed), turned into log-densities at the end.
  Eigen::VectorXd log_det;
  if (opt.log_densities) log_det = Eigen::VectorXd::Constant(n, factor_.log_determinant());

  const Eigen::MatrixXd& lower = factor_.lower();
  Model full{&lower, {}, nullptr};
  if (opt.conditional_drops) full.inverse_diagonal = inverse_diagonal(lower);
  const RawRowFetch fetch_full = [&](Index i, Eigen::VectorXd& raw, Eigen::VectorXd& mu) {
    raw = x.row(i).transpose();
    mu = location_;
  };

  // Complete rows: block copy, centre, one triangular solve per block. Rows
  // with a NaN are set aside by pattern and scored afterwards. Blocks are fixed
  // row ranges scored on opt.threads threads; the rows set aside are gathered
  // in block order, as one thread would meet them.
  const Index chunks = chunk_count(n, kChunkRows);
  const Index block_rows = std::min(kChunkRows, std::max<Index>(n, 1));
  struct Scratch {
    Eigen::MatrixXd block, work;
    std::vector<Index> rows;
    std::vector<double> norms;
  };
  std::vector<Scratch> scratch(static_cast<std::size_t>(parallel_workers(opt.threads, chunks)));
  std::vector<std::vector<Index>> set_aside(static_cast<std::size_t>(chunks));  // incomplete rows per chunk
  parallel_for(opt.threads, chunks, [&](Index c, int worker) {
    Scratch& s = scratch[static_cast<std::size_t>(worker)];
    if (s.block.rows() == 0) {
      s.block.resize(block_rows + kColumnPad, p);
      s.work.resize(opt.contributions || opt.conditional_drops ? block_rows + kColumnPad : 0, p);
      s.rows.resize(static_cast<std::size_t>(block_rows));
      s.norms.resize(static_cast<std::size_t>(block_rows));
    }
    auto& aside = set_aside[static_cast<std::size_t>(c)];
    const Index start = c * kChunkRows;
    const Index m = std::min(kChunkRows, n - start);
    Eigen::MatrixXd& block = s.block;
    block.topRows(m) = x.middleRows(start, m);
    Index kept = 0;
    for (Index k = 0; k < m; ++k) {
      const Index i = start + k;
      if (block.row(k).allFinite()) {
        if (kept != k) block.row(kept) = block.row(k);
        s.rows[static_cast<std::size_t>(kept++)] = i;
        continue;
      }
      for (Index j = 0; j < p; ++j)
        if (std::isinf(block(k, j))) throw_infinite(i, j, block(k, j));
      aside.push_back(i);
    }
    if (kept == 0) return;
    block.topRows(kept).rowwise() -= location_.transpose();
    score_block(full, block.topRows(kept), s.work, s.norms.data(), s.rows.data(), fetch_full, opt, out);
  });
  std::vector<Index> incomplete;
  for (const auto& aside : set_aside) incomplete.insert(incomplete.end(), aside.begin(), aside.end());
  const MissingLayout layout = group_missing_patterns(x, incomplete, "scoring");
  for (Index i : layout.all_missing_rows) {
    out.d2(i) = kNaN;
    out.df(i) = 0;
    if (opt.log_densities) log_det(i) = kNaN;
  }

  // One factorisation per missingness pattern: the marginal of the observed
  // coordinates o is N(T_o, S_oo).
  for (const MissingPattern& pattern : layout.patterns) {
    const std::vector<Index>& observed = pattern.observed;
    const std::vector<Index>& members = pattern.rows;
    const Index q = static_cast<Index>(observed.size());
    ++out.missing_patterns;
    Eigen::MatrixXd sub(q, q);
    for (Index b = 0; b < q; ++b)
      for (Index a = 0; a < q; ++a)
        sub(a, b) =
            scatter_.size() ? scatter_(observed[a], observed[b]) : lower.row(observed[a]).dot(lower.row(observed[b]));
    CholeskyFactor sub_factor;
    if (!sub_factor.compute(sub))
      throw Error(ErrorKind::Singular,
                  "scorer: the scatter sub-matrix of a missingness pattern is not positive "
                  "definite (the scatter is too ill-conditioned)");
    if (opt.log_densities)
      for (Index i : members) log_det(i) = sub_factor.log_determinant();
    Model marginal{&sub_factor.lower(), {}, &observed};
    if (opt.conditional_drops) marginal.inverse_diagonal = inverse_diagonal(sub_factor.lower());
    Eigen::MatrixXd sub_block(std::min<Index>(kChunkRows, static_cast<Index>(members.size())), q);
    Eigen::MatrixXd sub_work(opt.contributions || opt.conditional_drops ? sub_block.rows() : 0, q);
    std::vector<double> sub_norms(static_cast<std::size_t>(sub_block.rows()));
    for (std::size_t first = 0; first < members.size(); first += static_cast<std::size_t>(kChunkRows)) {
      const Index m = std::min<Index>(kChunkRows, static_cast<Index>(members.size() - first));
      for (Index k = 0; k < m; ++k) {
        const Index i = members[first + static_cast<std::size_t>(k)];
        out.df(i) = q;
        for (Index a = 0; a < q; ++a) sub_block(k, a) = x(i, observed[a]) - location_(observed[a]);
      }
      const RawRowFetch fetch_observed = [&](Index i, Eigen::VectorXd& raw, Eigen::VectorXd& mu) {
        raw.resize(q);
        mu.resize(q);
        for (Index a = 0; a < q; ++a) {
          raw(a) = x(i, observed[a]);
          mu(a) = location_(observed[a]);
        }
      };
      score_block(marginal, sub_block.topRows(m), sub_work, sub_norms.data(), members.data() + first, fetch_observed,
                  opt, out);
    }
  }

  // Cutoffs and p-values depend on the row's degrees of freedom only.
  Eigen::VectorXd cutoff(p + 1);
  cutoff(0) = kNaN;
  for (Index df = 1; df <= p; ++df)
    cutoff(df) = df <= reference_max_df(opt.reference) ? reference_limit(opt.reference, df, opt.level) : kNaN;
  for (Index i = 0; i < n; ++i)
    if (out.df(i) > 0 && std::isnan(cutoff(out.df(i))))
      throw Error(ErrorKind::Argument,
                  "scoring: row " + std::to_string(i) + " has " + std::to_string(out.df(i)) +
                      " observed coordinates, more than the reference rows of the profile support");
  out.flagged.resize(n);
  for (Index i = 0; i < n; ++i) out.flagged(i) = out.df(i) > 0 && out.d2(i) > cutoff(out.df(i));
  if (opt.log_densities) {
    const double log_2pi = std::log(2.0 * std::numbers::pi);
    out.log_density.resize(n);
    for (Index i = 0; i < n; ++i)
      out.log_density(i) = -0.5 * (static_cast<double>(out.df(i)) * log_2pi + log_det(i) + out.d2(i));
  }
  if (opt.p_values) {
    out.p_value.resize(n);
    parallel_for(opt.threads, chunks, [&](Index c, int) {
      const Index end = std::min(n, (c + 1) * kChunkRows);
      for (Index i = c * kChunkRows; i < end; ++i)
        out.p_value(i) = out.df(i) > 0 ? reference_sf(opt.reference, out.df(i), out.d2(i)) : kNaN;
    });
  }
  return out;
}

bool MahalanobisScorer::score_finite(DataView x, const ScoringOptions& opt, const FiniteRowOutputs& out) const {
  const Index n = x.rows(), p = dimension();
  if (x.cols() != p)
    throw Error(ErrorKind::Shape,
                "scorer: data have " + std::to_string(x.cols()) + " columns, model has " + std::to_string(p));
  if (!(opt.level > 0.0 && opt.level < 1.0)) throw Error(ErrorKind::Argument, "scorer: level must lie in (0, 1)");
  if (opt.contributions || opt.conditional_drops) return false;
  // Everything that could refuse the table is decided before the first write.
  if (p > reference_max_df(opt.reference) || !all_finite_in_memory_order(x)) return false;
  const double cutoff = reference_limit(opt.reference, p, opt.level);
  const double log_2pi = std::log(2.0 * std::numbers::pi);
  const double log_det = factor_.log_determinant();
  const Eigen::MatrixXd& lower = factor_.lower();
  const Model full{&lower, {}, nullptr};

  const Index chunks = chunk_count(n, kChunkRows);
  const Index block_rows = std::min(kChunkRows, std::max<Index>(n, 1));
  std::vector<Eigen::MatrixXd> blocks(static_cast<std::size_t>(parallel_workers(opt.threads, chunks)));
  std::vector<std::vector<double>> norms(blocks.size());
  for (std::size_t w = 0; w < blocks.size(); ++w) {
    blocks[w].resize(block_rows + kColumnPad, p);
    norms[w].resize(static_cast<std::size_t>(block_rows));
  }
  // The same kernel and the same arithmetic, row by row, as score(): the
  // numbers agree bit for bit (tests/core/test_scoring.cpp).
  parallel_for(opt.threads, chunks, [&](Index c, int worker) {
    Eigen::MatrixXd& block = blocks[static_cast<std::size_t>(worker)];
    const Index start = c * kChunkRows;
    const Index m = std::min(kChunkRows, n - start);
    double* d2 = out.d2 ? out.d2 + start : norms[static_cast<std::size_t>(worker)].data();
    copy_centred(x, start, m, location_, block);
    whiten_rows(block.data(), block.outerStride(), m, lower);
    row_squared_norms(block.data(), block.outerStride(), m, p, d2);
    for (Index k = 0; k < m; ++k) {
      const Index i = start + k;
      // The same rescaled arithmetic as score() for a row that overflowed.
      if (!std::isfinite(d2[k]))
        d2[k] = checked_whiten_scaled(full, x.row(i).transpose(), location_, i).squared_distance;
      if (out.flag) out.flag[i] = d2[k] > cutoff ? 1 : 0;
      if (out.p_value) out.p_value[i] = reference_sf(opt.reference, p, d2[k]);
      if (out.log_density) out.log_density[i] = -0.5 * (static_cast<double>(p) * log_2pi + log_det + d2[k]);
    }
  });
  return true;
}

}  // namespace ellipsa::core
