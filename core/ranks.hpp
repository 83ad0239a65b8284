// Ranks of a sample with average ranks for ties: the Spearman and
// normal-scores starts of DetMCD rank every column of n rows, and at
// n = 1e5 a comparison sort of (value, row) pairs took 9 ms per column, a
// sixth of the whole fit (docs/performance.md). The radix sort of
// radix_sort.hpp gives the same order in a few linear passes.
#pragma once
#include <cstdint>
#include <vector>

#include "data_view.hpp"
#include "radix_sort.hpp"

namespace ellipsa::core {

// Scratch of average_ranks(); keeping it between calls saves the allocations.
struct RankWorkspace {
  std::vector<std::uint64_t> keys;
  std::vector<std::uint32_t> rows;
  RadixScratch radix;
  // Sizes the buffers for samples of n values. Call it on the thread that
  // starts a parallel loop (memory first allocated on a worker thread comes
  // from an arena glibc empties between fits: CStepWorkspace::reserve).
  void reserve(Eigen::Index n);
};

// r(i) = the rank of v(i) among v(0..n-1), 1-based, ties given the average
// of the ranks they span (so the ranks sum to n (n + 1) / 2); -0 and +0 are
// equal. Values must not be NaN (infinities are ordered as usual). Returns the
// number of tied pairs: i < j with v(i) == v(j). r and v have the same size;
// n must be below 2^32. A function of the values only: permuting v permutes r.
long long average_ranks(const Eigen::Ref<const Eigen::VectorXd>& v, Eigen::Ref<Eigen::VectorXd> r,
                        RankWorkspace& workspace);

}  // namespace ellipsa::core
