#include "moments.hpp"

#include <cblas.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <vector>

#include "error.hpp"
#include "parallel.hpp"

namespace ellipsa::core {
namespace {

// Rows per chunk: large enough that the rank-k update runs at BLAS-3 speed and
// the per-chunk overhead vanishes. 256..4096 measured within noise of each other
// in bench_classical (1e6 x 50); 4096 was the fastest.
constexpr Index kChunkRows = 4096;
// Rows per block when a chunk of a non-column-major view is copied.
constexpr Index kCopyRows = 8;

// lower += c' c for a column-major chunk c (rows x p), lower triangle only.
void add_gram_lower(const Eigen::MatrixXd& c, Eigen::MatrixXd& lower) {
  if (c.rows() == 0 || c.cols() == 0) return;
  cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, static_cast<int>(c.cols()), static_cast<int>(c.rows()), 1.0,
              c.data(), static_cast<int>(c.rows()), 1.0, lower.data(), static_cast<int>(lower.outerStride()));
}

}  // namespace

MomentAccumulator::MomentAccumulator(Index p)
    : shift_(Eigen::VectorXd::Zero(p)),
      relative_mean_(Eigen::VectorXd::Zero(p)),
      mean_(Eigen::VectorXd::Zero(p)),
      lower_(Eigen::MatrixXd::Zero(p, p)) {}

MomentAccumulator::State MomentAccumulator::state() const {
  State s;
  s.weight = weight_;
  s.rows = rows_;
  s.direct_rows = direct_rows_;
  s.shifted = shifted_;
  s.shift = shift_;
  s.relative_mean = relative_mean_;
  s.lower = lower_;
  return s;
}

MomentAccumulator MomentAccumulator::from_state(const State& s) {
  const Index p = s.shift.size();
  auto bad = [](const std::string& what) { throw Error(ErrorKind::Format, "accumulator state: " + what); };
  if (s.relative_mean.size() != p || s.lower.rows() != p || s.lower.cols() != p) bad("sizes differ");
  if (!s.shift.allFinite() || !s.relative_mean.allFinite() || !std::isfinite(s.weight))
    bad("a non-finite shift, mean or weight");
  for (Index j = 0; j < p; ++j)
    for (Index i = j; i < p; ++i)
      if (!std::isfinite(s.lower(i, j))) bad("a non-finite cross-product");
  if (s.rows < 0 || s.direct_rows < 0 || s.direct_rows > s.rows) bad("row counts out of range");
  if (s.weight < 0.0 || (s.rows == 0) != (s.weight == 0.0)) bad("a weight that does not fit the row count");
  if (s.rows > 0 && !s.shifted) bad("rows without a shift");
  for (Index j = 0; j < p; ++j)
    if (s.lower(j, j) < 0.0) bad("a negative sum of squares");
  MomentAccumulator a(p);
  a.weight_ = s.weight;
  a.rows_ = s.rows;
  a.direct_rows_ = s.direct_rows;
  a.shifted_ = s.shifted;
  a.shift_ = s.shift;
  a.relative_mean_ = s.relative_mean;
  a.mean_ = a.shift_ + a.relative_mean_;
  a.lower_ = Eigen::MatrixXd::Zero(p, p);
  a.lower_.triangularView<Eigen::Lower>() = s.lower.triangularView<Eigen::Lower>();
  return a;
}

Eigen::MatrixXd MomentAccumulator::cross_products() const {
  Eigen::MatrixXd full = lower_.selfadjointView<Eigen::Lower>();
  return full;
}

void MomentAccumulator::merge_relative(double wb, Index rows_b, const Eigen::VectorXd& mb, const Eigen::MatrixXd& Mb) {
  if (!(wb > 0.0)) return;
  const double wa = weight_;
  const double w = wa + wb;
  // Chan, Golub & LeVeque (1979): m = ma + delta*wb/w,
  // M = Ma + Mb + delta*delta' * wa*wb/w.
  const Eigen::VectorXd delta = mb - relative_mean_;
  relative_mean_ += delta * (wb / w);
  mean_ = shift_ + relative_mean_;
  lower_.triangularView<Eigen::Lower>() += Mb;
  if (wa > 0.0) lower_.selfadjointView<Eigen::Lower>().rankUpdate(delta, wa * wb / w);
  weight_ = w;
  rows_ += rows_b;
}

void MomentAccumulator::merge(double wb, Index rows_b, const Eigen::VectorXd& mb, const Eigen::MatrixXd& Mb) {
  if (mb.size() != dimension() || Mb.rows() != dimension() || Mb.cols() != dimension())
    throw Error(ErrorKind::Shape, "moment merge: dimensions differ");
  if (!(wb > 0.0)) return;
  if (!shifted_) {
    shift_ = mb;
    shifted_ = true;
  }
  merge_relative(wb, rows_b, mb - shift_, Mb);
}

void MomentAccumulator::merge(const MomentAccumulator& other) {
  if (other.dimension() != dimension()) throw Error(ErrorKind::Shape, "moment merge: dimensions differ");
  if (!(other.weight_ > 0.0)) return;
  if (!shifted_) {
    shift_ = other.shift_;
    shifted_ = true;
  }
  direct_rows_ += other.direct_rows_;
  // Shifts are data rows, so their difference is exact for nearby data.
  merge_relative(other.weight_, other.rows_, (other.shift_ - shift_) + other.relative_mean_, other.cross_products());
}

namespace {

// chunk = rows of src minus the shift, then centred by their own mean, which is
// returned (relative to the shift). Subtracting a data row first leaves values
// of the size of the spread, so their mean is accurate to eps*spread and one
// centring pass keeps every digit: the error it leaves in the cross-products is
// m*delta*delta', second order in that tiny delta.
template <class Source>
void shifted_centred_chunk(const Source& src, const Eigen::VectorXd& shift, Eigen::MatrixXd& chunk,
                           Eigen::RowVectorXd& mu) {
  chunk = src.rowwise() - shift.transpose();
  mu = chunk.colwise().mean();
  chunk.rowwise() -= mu;
}

}  // namespace

namespace {

// Largest |chunk mean| / chunk sd (per column) for which a chunk's centred
// cross-products may be taken from its raw product X'X - u xbar' (u = column
// sums, xbar = u / m). Forming X'X rounds entry (j,k) by about
// eps * sum_i |x_ij x_ik| and sum_i x_ij^2 = m (xbar_j^2 + sd_j^2), so the
// centred result carries an error, relative to sd_j sd_k, of about
// eps * (1 + B^2) on top of the centred path's own few eps: with B = 16 about
// 260 eps = 6e-14 (test_moments measures 2.8e-14 at 10 sd, 2.5e-13 at 30 sd).
// Data further from zero (NIST NumAcc4, values at 1e9 with sd 1e-3) take the
// centred copy, which keeps every digit.
constexpr double kMaxOffsetRatio = 16.0;

// One pass over a column-major block (m rows, leading dimension ld): column
// sums and, when wanted, column minima and maxima. The sums use 8 lanes and a
// fixed combination order, so they depend on the values alone, not on the
// address or the layout the block came from (the fit of a row-major and of a
// column-major copy of the same data must be bit-identical).
template <bool kRange>
void column_pass(const double* a, Index m, Index p, Index ld, double* sum, double* lo, double* hi) {
  constexpr int kLanes = 8;
  const Index body = m - m % kLanes;
  for (Index j = 0; j < p; ++j) {
    const double* c = a + j * ld;
    double s[kLanes] = {}, mn[kLanes], mx[kLanes];
    for (int l = 0; l < kLanes; ++l) mn[l] = mx[l] = m > 0 ? c[0] : 0.0;
    for (Index i = 0; i < body; i += kLanes)
      for (int l = 0; l < kLanes; ++l) {
        const double v = c[i + l];
        s[l] += v;
        if constexpr (kRange) {
          mn[l] = v < mn[l] ? v : mn[l];
          mx[l] = v > mx[l] ? v : mx[l];
        }
      }
    double total = ((s[0] + s[4]) + (s[1] + s[5])) + ((s[2] + s[6]) + (s[3] + s[7]));
    for (Index i = body; i < m; ++i) {
      total += c[i];
      if constexpr (kRange) {
        mn[0] = c[i] < mn[0] ? c[i] : mn[0];
        mx[0] = c[i] > mx[0] ? c[i] : mx[0];
      }
    }
    sum[j] = total;
    if constexpr (kRange)
      for (int l = 0; l < kLanes; ++l) {
        lo[j] = mn[l] < lo[j] ? mn[l] : lo[j];
        hi[j] = mx[l] > hi[j] ? mx[l] : hi[j];
      }
  }
}

}  // namespace

// raw = rows start..start+m-1 of x, column-major. Row-major rows (unit column
// step) are transposed in blocks of kCopyRows rows, which stay in L1, instead
// of p strided sweeps over the whole chunk; other layouts use Eigen's copy.
// The transposed block gets kColumnPad spare rows per column: with a leading
// dimension of 4096 doubles (32 KiB, a multiple of 4 KiB) the p lines written
// for one block of rows all fell in the same first-level cache set and evicted
// each other (1e6 x 50, row-major: 205 ms against 143 ms column-major before;
// see docs/performance.md).
void copy_rows_column_major(DataView x, Index start, Index m, Eigen::MatrixXd& raw) {
  const Index p = x.cols();
  if (x.outerStride() != 1) {
    raw = x.middleRows(start, m);
    return;
  }
  constexpr Index kColumnPad = 8;
  const Index ld = m + kColumnPad;
  raw.resize(ld, p);
  const Index row_step = x.innerStride();
  const double* src = x.data() + start * row_step;
  double* dst = raw.data();
  for (Index r = 0; r < m; r += kCopyRows) {
    const Index b = std::min(kCopyRows, m - r);
    for (Index j = 0; j < p; ++j)
      for (Index l = 0; l < b; ++l) dst[j * ld + r + l] = src[(r + l) * row_step + j];
  }
}

ColumnMajorChunks::ColumnMajorChunks(DataView x)
    : x_(x),
      in_place_(x.innerStride() == 1 && x.outerStride() <= std::numeric_limits<int>::max() &&
                (x.cols() == 1 || x.outerStride() >= x.rows())),
      ld_in_place_(std::max<Index>(x.outerStride(), x.rows())) {}

const double* ColumnMajorChunks::block(Index start, Index m, Index& ld) {
  if (in_place_) {
    ld = ld_in_place_;
    return x_.data() + start;
  }
  copy_rows_column_major(x_, start, m, raw_);
  ld = raw_.rows();
  return raw_.data();
}

bool MomentAccumulator::offset_allows_raw_product() const {
  // Predicted from the moments so far; each chunk is checked again on its own
  // moments before its raw product is used.
  if (!(weight_ > 0.0)) return false;
  for (Index j = 0; j < dimension(); ++j)
    if (!(mean_(j) * mean_(j) * weight_ <= kMaxOffsetRatio * kMaxOffsetRatio * lower_(j, j))) return false;
  return true;
}

namespace {

// What one chunk of rows contributes: its count, its mean relative to the
// accumulator's shift, its centred cross-products (lower triangle) and, when
// screening, its column sums and ranges.
struct ChunkMoments {
  Index rows = 0;
  bool direct = false;  // cross-products from the raw product
  Eigen::VectorXd relative_mean;
  Eigen::MatrixXd gram;
  Eigen::VectorXd sum, lo, hi;
};

// Per-thread scratch of the chunk loop.
struct ChunkScratch {
  Eigen::MatrixXd raw, chunk;
  Eigen::RowVectorXd mu;
};

}  // namespace

void MomentAccumulator::add(DataView x, ColumnScreen* screen) {
  const Index p = dimension();
  if (x.cols() != p) throw Error(ErrorKind::Shape, "moment accumulator: column count differs");
  if (screen) {
    screen->finite = true;
    screen->min = Eigen::VectorXd::Constant(p, std::numeric_limits<double>::infinity());
    screen->max = Eigen::VectorXd::Constant(p, -std::numeric_limits<double>::infinity());
  }
  if (x.rows() == 0) return;
  if (!shifted_) {
    shift_ = x.row(0).transpose();
    shifted_ = true;
  }
  // Column-major caller data (unit row step, columns at least a chunk apart, an
  // int leading dimension) are read in place: a chunk of rows is a BLAS
  // sub-matrix. Other layouts are copied chunk by chunk into `raw` first (row
  // blocks packed into a column-major tile that stays in cache); the arithmetic
  // after that point is the same for every layout.
  const bool in_place = x.innerStride() == 1 && x.outerStride() <= std::numeric_limits<int>::max() &&
                        (p == 1 || x.outerStride() >= x.rows());
  const Index ld_in_place = std::max<Index>(x.outerStride(), x.rows());
  using ColumnMajor = Eigen::Map<const Eigen::MatrixXd, Eigen::Unaligned, Eigen::OuterStride<>>;
  const ColumnMajor cm(x.data(), x.rows(), x.cols(), Eigen::OuterStride<>(in_place ? x.outerStride() : 1));
  const Eigen::VectorXd shift = shift_;

  // Chunk c covers rows c*kChunkRows.. whatever the thread count; its moments
  // depend on its rows, the shift and `try_raw` only, and are merged in chunk
  // order below, so the result is bit-identical for every thread count.
  auto compute = [&](Index c, bool try_raw, ChunkScratch& s, ChunkMoments& r) {
    const Index start = c * kChunkRows;
    const Index m = std::min(kChunkRows, x.rows() - start);
    if (!in_place) copy_rows_column_major(x, start, m, s.raw);
    const double* block = in_place ? x.data() + start : s.raw.data();
    const Index ld = in_place ? ld_in_place : s.raw.rows();
    r.rows = m;
    r.gram.resize(p, p);
    if (screen) {
      r.sum.resize(p);
      r.lo = Eigen::VectorXd::Constant(p, std::numeric_limits<double>::infinity());
      r.hi = Eigen::VectorXd::Constant(p, -std::numeric_limits<double>::infinity());
      column_pass<true>(block, m, p, ld, r.sum.data(), r.lo.data(), r.hi.data());
    } else if (try_raw) {
      r.sum.resize(p);
      column_pass<false>(block, m, p, ld, r.sum.data(), nullptr, nullptr);
    }
    if (try_raw) {
      // Centred cross-products from the raw product: X'X - u xbar' (u = column
      // sums, xbar = u / m), lower triangle, accepted only when this chunk's
      // own offset is within kMaxOffsetRatio sds (NaN fails the test).
      const double md = static_cast<double>(m);
      const Eigen::VectorXd xbar = r.sum / md;
      cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, static_cast<int>(p), static_cast<int>(m), 1.0, block,
                  static_cast<int>(ld), 0.0, r.gram.data(), static_cast<int>(p));
      bool accepted = true;
      for (Index k = 0; k < p; ++k) {
        for (Index i = k; i < p; ++i) r.gram(i, k) -= r.sum(i) * xbar(k);
        accepted = accepted && md * xbar(k) * xbar(k) <= kMaxOffsetRatio * kMaxOffsetRatio * r.gram(k, k);
      }
      if (accepted) {
        r.relative_mean = xbar - shift;
        r.direct = true;
        return;
      }
    }
    if (in_place) {
      // The vectorised copy needs the compile-time unit row step of `cm`.
      shifted_centred_chunk(cm.middleRows(start, m), shift, s.chunk, s.mu);
    } else {
      s.chunk = s.raw.topRows(m);  // without the spare rows of a transposed block
      s.chunk.rowwise() -= shift.transpose();
      s.mu = s.chunk.colwise().mean();
      s.chunk.rowwise() -= s.mu;
    }
    r.gram.setZero();
    add_gram_lower(s.chunk, r.gram);
    r.relative_mean = s.mu.transpose();
    r.direct = false;
  };
  auto merge_chunk = [&](const ChunkMoments& r) {
    if (screen) {
      screen->finite = screen->finite && r.sum.allFinite();
      screen->min = screen->min.cwiseMin(r.lo);
      screen->max = screen->max.cwiseMax(r.hi);
    }
    merge_relative(static_cast<double>(r.rows), r.rows, r.relative_mean, r.gram);
    if (r.direct) direct_rows_ += r.rows;
  };

  // The first chunk decides, from the moments so far, whether the raw product
  // is tried; the rest follow the moments after the first chunk, and a chunk
  // whose own offset is too large takes the centred path on its own.
  const Index chunks = chunk_count(x.rows(), kChunkRows);
  ChunkScratch first_scratch;
  {
    ChunkMoments r;
    compute(0, offset_allows_raw_product(), first_scratch, r);
    merge_chunk(r);
  }
  if (chunks == 1) return;
  const bool try_raw = offset_allows_raw_product();
  std::vector<ChunkMoments> results(static_cast<std::size_t>(chunks - 1));
  std::vector<ChunkScratch> scratch(static_cast<std::size_t>(parallel_workers(threads_, chunks - 1)));
  scratch[0] = std::move(first_scratch);
  parallel_for(threads_, chunks - 1, [&](Index c, int worker) {
    compute(c + 1, try_raw, scratch[static_cast<std::size_t>(worker)], results[static_cast<std::size_t>(c)]);
  });
  for (const auto& r : results) merge_chunk(r);
}

void MomentAccumulator::add(DataView x, const Eigen::Ref<const Eigen::VectorXd>& w) {
  const Index p = dimension();
  if (x.cols() != p) throw Error(ErrorKind::Shape, "moment accumulator: column count differs");
  if (w.size() != x.rows()) throw Error(ErrorKind::Shape, "moment accumulator: one weight per row");
  Eigen::MatrixXd chunk;
  Eigen::MatrixXd gram(p, p);
  for (Index start = 0; start < x.rows(); start += kChunkRows) {
    const Index m = std::min(kChunkRows, x.rows() - start);
    const auto wc = w.segment(start, m);
    const double ws = wc.sum();
    if (!(ws > 0.0)) continue;
    const Index positive = (wc.array() > 0.0).count();
    if (!shifted_) {
      Index first = 0;
      while (!(wc(first) > 0.0)) ++first;
      shift_ = x.row(start + first).transpose();
      shifted_ = true;
    }
    chunk = x.middleRows(start, m);
    chunk.rowwise() -= shift_.transpose();
    Eigen::RowVectorXd mu = (wc.transpose() * chunk) / ws;
    chunk.rowwise() -= mu;
    const Eigen::RowVectorXd correction = (wc.transpose() * chunk) / ws;
    chunk.rowwise() -= correction;
    mu += correction;
    chunk.array().colwise() *= wc.array().sqrt();
    gram.setZero();
    add_gram_lower(chunk, gram);
    merge_relative(ws, positive, mu.transpose(), gram.selfadjointView<Eigen::Lower>());
  }
}

namespace {

// Largest |weighted mean - shift| / weighted sd (per column) for which
// weighted_moments keeps its shifted raw products. With y_i = x_i - shift the
// products sum_i w_i y_ij y_ik round by about eps * sum_i w_i |y_ij y_ik| <=
// eps * W (d_j^2 + sd_j^2)^(1/2) (d_k^2 + sd_k^2)^(1/2), d = mean - shift, so the
// centred result carries about eps * (1 + B^2) = 17 eps relative to sd_j sd_k on
// top of the accumulation error of the products themselves. The previous EM
// mean is far closer than that after the first iterations.
constexpr double kMaxShiftRatio = 4.0;

}  // namespace

std::vector<WeightedMoments> weighted_moments(DataView x, const Eigen::MatrixXd& w, const Eigen::MatrixXd& shifts,
                                              int threads) {
  const Index n = x.rows();
  const Index p = x.cols();
  const Index k_count = w.cols();
  if (w.rows() != n) throw Error(ErrorKind::Shape, "weighted moments: one weight row per data row");
  if (shifts.rows() != k_count || shifts.cols() != p)
    throw Error(ErrorKind::Shape, "weighted moments: one shift row of the data's width per weighting");
  Eigen::MatrixXd centre = shifts.transpose();  // p x K, column k = shift of weighting k
  for (Index k = 0; k < k_count; ++k) {
    if (centre.col(k).allFinite()) continue;
    Index heaviest = 0;
    if (n > 0) w.col(k).maxCoeff(&heaviest);
    centre.col(k) = n > 0 ? Eigen::VectorXd(x.row(heaviest).transpose()) : Eigen::VectorXd::Zero(p);
  }
  // Per weighting: sum of weights, sum_i w_i y_i and the lower triangle of
  // sum_i w_i y_i y_i' with y_i = x_i - centre. Every chunk's products come from
  // one dsyrk on sqrt(w_i) y_i, formed in one pass over the chunk while it is
  // in cache, so x is read once for all K weightings.
  Eigen::VectorXd total = Eigen::VectorXd::Zero(k_count);
  Eigen::MatrixXd sums = Eigen::MatrixXd::Zero(p, k_count);
  std::vector<Eigen::MatrixXd> lower(static_cast<std::size_t>(k_count), Eigen::MatrixXd::Zero(p, p));
  // Each fixed chunk's sums go to its own slot (on `threads` threads) and are
  // added in chunk order afterwards, as one thread would add them.
  struct ChunkSums {
    Eigen::VectorXd weight;              // per weighting, 0 when skipped
    Eigen::MatrixXd sums;                // p x K
    std::vector<Eigen::MatrixXd> lower;  // K lower triangles (empty when skipped)
  };
  struct Scratch {
    std::unique_ptr<ColumnMajorChunks> chunks;
    Eigen::MatrixXd y;
    Eigen::ArrayXd root;
  };
  const Index chunk_total = chunk_count(n, kChunkRows);
  std::vector<ChunkSums> parts(static_cast<std::size_t>(chunk_total));
  // Scratch made on the calling thread: memory a worker thread allocates comes
  // from its own malloc arena, which glibc returns to the system when it
  // empties (mcd_common.hpp, CStepWorkspace::reserve).
  std::vector<Scratch> scratch(static_cast<std::size_t>(parallel_workers(threads, chunk_total)));
  for (Scratch& s : scratch) {
    s.chunks = std::make_unique<ColumnMajorChunks>(x);
    s.y.resize(std::min(kChunkRows, std::max<Index>(n, 1)), p);
    s.root.resize(std::min(kChunkRows, std::max<Index>(n, 1)));
  }
  parallel_for(threads, chunk_total, [&](Index c, int worker) {
    Scratch& s = scratch[static_cast<std::size_t>(worker)];
    ChunkSums& part = parts[static_cast<std::size_t>(c)];
    part.weight = Eigen::VectorXd::Zero(k_count);
    part.sums = Eigen::MatrixXd::Zero(p, k_count);
    part.lower.resize(static_cast<std::size_t>(k_count));
    const Index start = c * kChunkRows;
    const Index m = std::min(kChunkRows, n - start);
    Index ld = 0;
    const double* block = s.chunks->block(start, m, ld);
    for (Index k = 0; k < k_count; ++k) {
      const auto wc = w.col(k).segment(start, m);
      const double ws = wc.sum();
      if (!(ws > 0.0)) continue;
      auto root = s.root.head(m);
      root = wc.array().sqrt();
      for (Index j = 0; j < p; ++j) {
        const Eigen::Map<const Eigen::ArrayXd> xj(block + j * ld, m);
        auto yj = s.y.col(j).head(m).array();
        yj = (xj - centre(j, k)) * root;
        part.sums(j, k) = (yj * root).sum();
      }
      Eigen::MatrixXd& gram = part.lower[static_cast<std::size_t>(k)];
      gram = Eigen::MatrixXd::Zero(p, p);  // dsyrk writes its lower triangle only
      cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, static_cast<int>(p), static_cast<int>(m), 1.0, s.y.data(),
                  static_cast<int>(s.y.rows()), 0.0, gram.data(), static_cast<int>(p));
      part.weight(k) = ws;
    }
  });
  for (const ChunkSums& part : parts)
    for (Index k = 0; k < k_count; ++k) {
      if (!(part.weight(k) > 0.0)) continue;
      sums.col(k) += part.sums.col(k);
      lower[static_cast<std::size_t>(k)] += part.lower[static_cast<std::size_t>(k)];
      total(k) += part.weight(k);
    }
  std::vector<WeightedMoments> out(static_cast<std::size_t>(k_count));
  for (Index k = 0; k < k_count; ++k) {
    WeightedMoments& r = out[static_cast<std::size_t>(k)];
    const double wk = total(k);
    Eigen::MatrixXd& s = lower[static_cast<std::size_t>(k)];
    bool accepted = wk > 0.0;
    Eigen::VectorXd offset = Eigen::VectorXd::Zero(p);
    if (accepted) {
      offset = sums.col(k) / wk;
      // Centred products: S - W d d' (lower triangle), d = mean - centre.
      for (Index b = 0; b < p; ++b) {
        for (Index a = b; a < p; ++a) s(a, b) -= wk * offset(a) * offset(b);
        accepted = accepted && wk * offset(b) * offset(b) <= kMaxShiftRatio * kMaxShiftRatio * s(b, b);
      }
    }
    if (accepted) {
      r.weight = wk;
      r.mean = centre.col(k) + offset;
      r.cross_products = s.selfadjointView<Eigen::Lower>();
    } else {
      MomentAccumulator acc(p);
      acc.add(x, w.col(k));
      r.weight = acc.weight_sum();
      r.mean = acc.mean();
      r.cross_products = acc.cross_products();
    }
  }
  return out;
}

Eigen::MatrixXd MomentAccumulator::covariance(Normalisation norm) const {
  const double divisor = norm == Normalisation::ByCount ? weight_ : weight_ - 1.0;
  if (!(divisor > 0.0))
    throw Error(ErrorKind::Data, norm == Normalisation::ByCount
                                     ? "covariance needs at least one row with positive weight"
                                     : "covariance with divisor n-1 needs a weight sum above 1 (at least 2 rows)");
  return cross_products() / divisor;
}

MeanCovariance mean_covariance(DataView x, Normalisation norm) {
  MomentAccumulator acc(x.cols());
  acc.add(x);
  return {acc.mean(), acc.covariance(norm)};
}

}  // namespace ellipsa::core
