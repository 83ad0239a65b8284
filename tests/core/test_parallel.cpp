// The fork-join loop and the team of threads that serves it during a fit
// (core/parallel.hpp): every task runs once, the lowest failing index's error
// is the one rethrown, a loop nested in a task does not wait for the team it
// runs on, and a scope inside a scope leaves the outer team in charge. The
// contract is the header's; the checks are exact (counts, indices, messages).
#include <gtest/gtest.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <stdexcept>
#include <string>
#include <thread>
#include <vector>

#include "core/parallel.hpp"

using namespace ellipsa::core;

namespace {

// Runs `count` tasks on `threads` threads and returns how often each ran.
std::vector<int> run_counts(int threads, Index count) {
  std::vector<std::atomic<int>> ran(static_cast<std::size_t>(count));
  parallel_for(threads, count, [&](Index i, int worker) {
    EXPECT_GE(worker, 0);
    EXPECT_LT(worker, parallel_workers(threads, count));
    ran[static_cast<std::size_t>(i)].fetch_add(1);
  });
  std::vector<int> out;
  for (auto& r : ran) out.push_back(r.load());
  return out;
}

// The message of the error parallel_for rethrows when tasks `bad` throw.
std::string first_error(int threads, Index count, const std::vector<Index>& bad) {
  try {
    parallel_for(threads, count, [&](Index i, int) {
      for (Index b : bad)
        if (b == i) throw std::runtime_error("task " + std::to_string(i));
    });
  } catch (const std::runtime_error& e) {
    return e.what();
  }
  return "none";
}

}  // namespace

TEST(Parallel, EveryTaskRunsOnceWithAndWithoutATeam) {
  for (const int threads : {1, 2, 3, 8}) {
    SCOPED_TRACE(threads);
    for (const Index count : {Index{0}, Index{1}, Index{2}, Index{7}, Index{1000}}) {
      EXPECT_EQ(run_counts(threads, count), std::vector<int>(static_cast<std::size_t>(count), 1));
      const TeamScope team(threads);
      // Many loops on one team: the same threads serve each of them.
      for (int loop = 0; loop < 50; ++loop)
        ASSERT_EQ(run_counts(threads, count), std::vector<int>(static_cast<std::size_t>(count), 1));
      // A loop asking for fewer threads than the team has.
      EXPECT_EQ(run_counts(2, count), std::vector<int>(static_cast<std::size_t>(count), 1));
    }
  }
}

// Tasks a thread other than the caller ran: a team's thread serves every
// loop, a thread started for one loop serves that loop only.
thread_local int loops_served = 0;

TEST(Parallel, ATeamsThreadServesLoopAfterLoop) {
  const TeamScope team(2);
  const auto caller = std::this_thread::get_id();
  int most = 0;
  for (int loop = 0; loop < 20; ++loop) {
    // Two tasks: the caller takes task 0 and waits (at most 2 s) until another
    // thread has taken task 1, so every loop has one task off the caller.
    std::atomic<bool> other_ran{false};
    std::atomic<int> served{0};
    parallel_for(2, 2, [&](Index, int) {
      if (std::this_thread::get_id() != caller) {
        served = ++loops_served;
        other_ran = true;
        return;
      }
      const auto until = std::chrono::steady_clock::now() + std::chrono::seconds(2);
      while (!other_ran && std::chrono::steady_clock::now() < until) std::this_thread::yield();
    });
    EXPECT_TRUE(other_ran.load()) << loop;
    most = std::max(most, served.load());
  }
  // One thread took tasks in all 20 loops (it may take both tasks of a loop
  // when it comes first); threads started per loop would each count 1 or 2.
  EXPECT_GE(most, 20);
}

TEST(Parallel, TheLowestFailingTaskIsTheErrorRethrown) {
  // Tasks are handed out in index order and none starts after a failure, so
  // with failures at 5 and 9 the error is task 5's whatever the threads.
  for (const int threads : {1, 2, 3}) {
    SCOPED_TRACE(threads);
    EXPECT_EQ(first_error(threads, 20, {5, 9}), "task 5");
    const TeamScope team(threads);
    EXPECT_EQ(first_error(threads, 20, {9, 5}), "task 5");
    EXPECT_EQ(first_error(threads, 20, {}), "none");
    // The team still serves loops after a failed one.
    EXPECT_EQ(run_counts(threads, 100), std::vector<int>(100, 1));
  }
}

TEST(Parallel, ALoopInsideATaskRunsWithoutTheBusyTeam) {
  const TeamScope team(2);
  std::vector<std::atomic<int>> inner(40);
  parallel_for(2, 4, [&](Index i, int) {
    parallel_for(3, 10, [&](Index j, int) { inner[static_cast<std::size_t>(i * 10 + j)].fetch_add(1); });
  });
  for (auto& v : inner) EXPECT_EQ(v.load(), 1);
}

TEST(Parallel, AnInnerScopeLeavesTheOuterTeamInCharge) {
  const TeamScope outer(3);
  {
    const TeamScope inner(2);  // a fit inside a fit: no second team
    EXPECT_EQ(run_counts(3, 30), std::vector<int>(30, 1));
  }
  EXPECT_EQ(run_counts(3, 30), std::vector<int>(30, 1));
}

TEST(Parallel, TeamsOnSeveralCallingThreadsAreIndependent) {
  // Each calling thread has its own team (thread-local), as two fits running
  // at once in one process do.
  std::vector<std::thread> callers;
  std::atomic<int> wrong{0};
  for (int c = 0; c < 3; ++c)
    callers.emplace_back([&wrong] {
      const TeamScope team(2);
      for (int loop = 0; loop < 30; ++loop)
        if (run_counts(2, 64) != std::vector<int>(64, 1)) wrong.fetch_add(1);
    });
  for (auto& t : callers) t.join();
  EXPECT_EQ(wrong.load(), 0);
}
