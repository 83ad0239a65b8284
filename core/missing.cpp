#include "missing.hpp"

#include <cmath>
#include <map>
#include <numeric>
#include <string>

#include "error.hpp"

namespace ellipsa::core {
namespace {

std::vector<Index> all_or(const std::vector<Index>& columns, Index p) {
  if (!columns.empty()) {
    for (Index c : columns)
      if (c < 0 || c >= p)
        throw Error(ErrorKind::Argument, "column index " + std::to_string(c) + " outside 0.." + std::to_string(p - 1));
    return columns;
  }
  std::vector<Index> all(static_cast<std::size_t>(p));
  std::iota(all.begin(), all.end(), Index{0});
  return all;
}

[[noreturn]] void throw_non_finite(Index row, Index col, double v, const char* what) {
  if (std::isnan(v))
    throw LocatedError(ErrorKind::Data, what, row, col, "is missing (NaN), and missing values are refused here");
  throw_infinite_cell(what, row, col, v);
}

}  // namespace

void throw_infinite_cell(const char* what, Index row, Index col, double v) {
  throw LocatedError(
      ErrorKind::Data, what, row, col,
      std::string("is infinite (") + (v > 0 ? "+Inf" : "-Inf") + "); NaN marks a missing value, Inf is not accepted");
}

// A contiguous table (either layout) is tested as one flat array, else
// column by column (unit row step) or by Eigen's generic loop.
bool all_finite_in_memory_order(DataView x) {
  const Index n = x.rows(), p = x.cols();
  using Flat = Eigen::Map<const Eigen::ArrayXd>;
  if (x.innerStride() == 1 && (x.outerStride() == n || p == 1)) return Flat(x.data(), n * p).allFinite();
  if (x.outerStride() == 1 && (x.innerStride() == p || n == 1)) return Flat(x.data(), n * p).allFinite();
  if (x.innerStride() == 1) {
    using ColumnMajor = Eigen::Map<const Eigen::MatrixXd, Eigen::Unaligned, Eigen::OuterStride<>>;
    return ColumnMajor(x.data(), n, p, Eigen::OuterStride<>(x.outerStride())).allFinite();
  }
  return x.allFinite();
}

CompleteRows select_complete_rows(DataView x, const std::vector<Index>& columns) {
  const std::vector<Index> cols = all_or(columns, x.cols());
  CompleteRows out;
  // The common case, every entry finite: every row is complete, found in one
  // pass in memory order instead of a row-by-row scan.
  if (columns.empty() && x.rows() > 0 && all_finite_in_memory_order(x)) {
    out.rows.resize(static_cast<std::size_t>(x.rows()));
    for (Index i = 0; i < x.rows(); ++i) out.rows[static_cast<std::size_t>(i)] = i;
    return out;
  }
  std::vector<Index> present(cols.size(), 0);
  out.rows.reserve(static_cast<std::size_t>(x.rows()));
  for (Index i = 0; i < x.rows(); ++i) {
    bool complete = true;
    for (std::size_t k = 0; k < cols.size(); ++k) {
      const double v = x(i, cols[k]);
      if (std::isnan(v)) {
        complete = false;
      } else {
        if (std::isinf(v)) throw_non_finite(i, cols[k], v, "complete rows");
        ++present[k];
      }
    }
    if (complete) out.rows.push_back(i);
    else ++out.dropped;
  }
  for (std::size_t k = 0; k < cols.size(); ++k)
    if (present[k] == 0) out.all_missing_columns.push_back(cols[k]);
  return out;
}

std::vector<Index> all_missing_columns(DataView x) {
  std::vector<Index> out;
  for (Index j = 0; j < x.cols(); ++j) {
    bool any = false;
    for (Index i = 0; i < x.rows() && !any; ++i) any = !std::isnan(x(i, j));
    if (!any) out.push_back(j);
  }
  return out;
}

Eigen::MatrixXd gather(DataView x, const std::vector<Index>& rows, const std::vector<Index>& columns) {
  const std::vector<Index> cols = all_or(columns, x.cols());
  Eigen::MatrixXd out(static_cast<Index>(rows.size()), static_cast<Index>(cols.size()));
  for (std::size_t k = 0; k < cols.size(); ++k)
    for (std::size_t r = 0; r < rows.size(); ++r) {
      if (rows[r] < 0 || rows[r] >= x.rows())
        throw Error(ErrorKind::Argument, "row index " + std::to_string(rows[r]) + " out of range");
      out(static_cast<Index>(r), static_cast<Index>(k)) = x(rows[r], cols[k]);
    }
  return out;
}

void require_finite(DataView x, const char* what) {
  // Fast vectorised test on contiguous columns first; the element-wise scan
  // below only runs to name the offending entry.
  if (all_finite_in_memory_order(x)) return;
  for (Index j = 0; j < x.cols(); ++j)
    for (Index i = 0; i < x.rows(); ++i)
      if (!std::isfinite(x(i, j))) throw_non_finite(i, j, x(i, j), what);
}

MissingLayout group_missing_patterns(DataView x, const std::vector<Index>& rows, const char* what) {
  const Index p = x.cols();
  MissingLayout layout;
  std::map<std::vector<char>, std::size_t> index_of;  // ordered: a deterministic layout
  std::vector<char> key(static_cast<std::size_t>(p));
  for (Index i : rows) {
    Index observed = 0;
    for (Index j = 0; j < p; ++j) {
      const double v = x(i, j);
      if (std::isinf(v)) throw_infinite_cell(what, i, j, v);
      const bool seen = !std::isnan(v);
      key[static_cast<std::size_t>(j)] = seen ? 1 : 0;
      observed += seen ? 1 : 0;
    }
    if (observed < p) ++layout.incomplete_rows;
    if (observed == 0) {
      layout.all_missing_rows.push_back(i);
      continue;
    }
    auto [it, fresh] = index_of.try_emplace(key, layout.patterns.size());
    if (fresh) {
      MissingPattern pat;
      for (Index j = 0; j < p; ++j) (key[static_cast<std::size_t>(j)] ? pat.observed : pat.missing).push_back(j);
      layout.patterns.push_back(std::move(pat));
    }
    layout.patterns[it->second].rows.push_back(i);
  }
  return layout;
}

MissingLayout group_missing_patterns(DataView x, const char* what) {
  std::vector<Index> all(static_cast<std::size_t>(x.rows()));
  std::iota(all.begin(), all.end(), Index{0});
  if (x.rows() > 0 && x.cols() > 0 && all_finite_in_memory_order(x)) {
    // The common case, what the scan below would build, without its lookup
    // per row (a tenth of a one-component mixture fit of 1e5 x 10, perf).
    MissingLayout layout;
    MissingPattern pattern;
    pattern.observed.resize(static_cast<std::size_t>(x.cols()));
    std::iota(pattern.observed.begin(), pattern.observed.end(), Index{0});
    pattern.rows = std::move(all);
    layout.patterns.push_back(std::move(pattern));
    return layout;
  }
  return group_missing_patterns(x, all, what);
}

}  // namespace ellipsa::core
