// A fork-join loop over numbered tasks for the kernels' fixed row chunks.
// Determinism is the caller's part of the contract: every task writes only its
// own result slot and the caller merges the slots in index order afterwards,
// so a result never depends on the number of threads or on which thread ran
// which task. No state outlives a call (no global pool, no global settings).
#pragma once
#include <functional>

#include "data_view.hpp"

namespace ellipsa::core {

// Largest thread count the kernels use; a larger request is clamped to it.
constexpr int kMaxThreads = 256;

// Runs task(i) for every i in [0, count) on at most `threads` threads, the
// calling thread included (threads <= 1, or count <= 1: all on the caller, in
// order). Tasks are handed out in increasing index order. When tasks throw, no
// further task is started and, after every running task has returned, the
// exception of the lowest index that threw is rethrown on the caller; since all
// lower indices were handed out before it, which exception that is does not
// depend on the thread count. When the system refuses a thread the loop runs on
// the threads it has.
//
// BLAS inside tasks: the kernels hand OpenBLAS blocks of one chunk (a few
// thousand rows by p), and OpenBLAS may add its own threads to each such call.
// With threads > 1 set OPENBLAS_NUM_THREADS=1 (docs/performance.md), so that
// the pool owns the cores; results do not depend on it either way, because
// OpenBLAS's own split of a syrk or trsm does not change its sums.
// task(i, worker) gets the index of the thread running it, in [0,
// parallel_workers(threads, count)), for per-thread scratch buffers.
void parallel_for(int threads, Index count, const std::function<void(Index, int)>& task);

// Threads parallel_for(threads, count, ...) uses at most: scratch slots to allocate.
int parallel_workers(int threads, Index count);

// Tasks worth starting for `rows` rows cut into chunks of `chunk_rows`.
inline Index chunk_count(Index rows, Index chunk_rows) { return (rows + chunk_rows - 1) / chunk_rows; }

}  // namespace ellipsa::core
