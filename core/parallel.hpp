// A fork-join loop over numbered tasks for the kernels' fixed row chunks, and
// the team of threads that serves those loops for the length of one fit.
// Determinism is the caller's part of the contract: every task writes only its
// own result slot and the caller merges the slots in index order afterwards,
// so a result never depends on the number of threads or on which thread ran
// which task. No state outlives a fit: no global pool, no global settings.
#pragma once
#include <functional>
#include <memory>

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
// The other threads are those of the calling thread's ThreadTeam when one is
// active (see TeamScope) and idle, else threads started for this call.
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

// Threads kept waiting for the loops of one fit. Why: a fit runs hundreds of
// loops (C-steps, EM iterations), and a thread started for each loop costs far
// more than its start-up: glibc returns an exiting thread's stack pages to the
// system, so every new thread faults its stack and thread-local storage in
// again (measured through the Python binding: about 4500 page faults per
// FAST-MCD fit at 1e5 x 10 on two threads against 300 on one, and the fit no
// faster than on one thread). A team's threads fault them in once.
class ThreadTeam;

// Makes a team of `threads` threads (the calling thread and threads - 1
// waiting ones) serve every parallel_for called on this thread until the scope
// ends. Does nothing when threads <= 1 or a team is already active on this
// thread (a fit inside a fit uses the outer team). Not copyable; destroyed on
// the thread that made it.
class TeamScope {
 public:
  explicit TeamScope(int threads);
  ~TeamScope();
  TeamScope(const TeamScope&) = delete;
  TeamScope& operator=(const TeamScope&) = delete;

 private:
  std::unique_ptr<ThreadTeam> team_;
};

}  // namespace ellipsa::core
