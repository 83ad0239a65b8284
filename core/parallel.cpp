#include "parallel.hpp"

#include <algorithm>
#include <atomic>
#include <condition_variable>
#include <cstdint>
#include <exception>
#include <mutex>
#include <system_error>
#include <thread>
#include <vector>

namespace ellipsa::core {

namespace {

// One loop's shared state: the next task to hand out, the stop flag set by the
// first error, and one error slot per task.
struct Loop {
  const std::function<void(Index, int)>* task = nullptr;
  Index count = 0;
  std::atomic<Index> next{0};
  std::atomic<bool> stop{false};
  std::vector<std::exception_ptr> errors;

  void drain(int worker) {
    for (;;) {
      if (stop.load(std::memory_order_acquire)) return;
      const Index i = next.fetch_add(1, std::memory_order_relaxed);
      if (i >= count) return;
      try {
        (*task)(i, worker);
      } catch (...) {
        errors[static_cast<std::size_t>(i)] = std::current_exception();
        stop.store(true, std::memory_order_release);
      }
    }
  }
  void rethrow_first() const {
    for (const auto& e : errors)
      if (e) std::rethrow_exception(e);
  }
};

}  // namespace

class ThreadTeam {
 public:
  explicit ThreadTeam(int threads) {
    try {
      threads_.reserve(static_cast<std::size_t>(threads - 1));
      for (int id = 1; id < threads; ++id) {
        try {
          threads_.emplace_back([this, id] { serve(id); });
        } catch (const std::system_error&) {
          break;  // serve with the threads already started
        }
      }
    } catch (...) {  // out of memory: the started threads must not outlive the team
      stop();
      throw;
    }
  }
  ~ThreadTeam() { stop(); }
  int size() const { return static_cast<int>(threads_.size()) + 1; }
  bool busy() const { return busy_; }

  // The loop on `workers` threads of the team (the caller is worker 0).
  void run(int workers, Loop& loop) {
    busy_ = true;
    {
      std::lock_guard<std::mutex> lock(mutex_);
      loop_ = &loop;
      workers_ = workers;
      active_ = workers - 1;
      ++generation_;
    }
    wake_.notify_all();
    loop.drain(0);
    {
      std::unique_lock<std::mutex> lock(mutex_);
      done_.wait(lock, [this] { return active_ == 0; });
      loop_ = nullptr;
    }
    busy_ = false;
  }

 private:
  void stop() {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      quit_ = true;
    }
    wake_.notify_all();
    for (auto& t : threads_) t.join();
    threads_.clear();
  }

  void serve(int id) {
    std::uint64_t seen = 0;
    for (;;) {
      Loop* loop = nullptr;
      {
        std::unique_lock<std::mutex> lock(mutex_);
        wake_.wait(lock, [&] { return quit_ || generation_ != seen; });
        if (quit_) return;
        seen = generation_;
        if (id >= workers_) continue;  // not needed for this loop
        loop = loop_;
      }
      loop->drain(id);
      {
        std::lock_guard<std::mutex> lock(mutex_);
        if (--active_ == 0) done_.notify_one();
      }
    }
  }

  std::vector<std::thread> threads_;
  std::mutex mutex_;
  std::condition_variable wake_, done_;
  std::uint64_t generation_ = 0;
  bool quit_ = false;
  Loop* loop_ = nullptr;
  int workers_ = 0;
  int active_ = 0;
  bool busy_ = false;  // read and written on the owning thread only
};

namespace {
// The team serving parallel_for on this thread (TeamScope), if any.
thread_local ThreadTeam* current_team = nullptr;
}  // namespace

TeamScope::TeamScope(int threads) {
  threads = std::clamp(threads, 1, kMaxThreads);
  if (threads <= 1 || current_team) return;
  team_ = std::make_unique<ThreadTeam>(threads);
  current_team = team_.get();
}

TeamScope::~TeamScope() {
  if (team_) current_team = nullptr;
}

int parallel_workers(int threads, Index count) {
  return static_cast<int>(std::max<Index>(1, std::min<Index>(std::clamp(threads, 1, kMaxThreads), count)));
}

void parallel_for(int threads, Index count, const std::function<void(Index, int)>& task) {
  if (count <= 0) return;
  const int workers = parallel_workers(threads, count);
  if (workers <= 1) {
    for (Index i = 0; i < count; ++i) task(i, 0);
    return;
  }
  Loop loop;
  loop.task = &task;
  loop.count = count;
  loop.errors.resize(static_cast<std::size_t>(count));
  // The team, unless this call is nested in one of its loops (a task on the
  // calling thread that loops again): then threads of its own, as without a team.
  if (current_team && !current_team->busy() && current_team->size() > 1) {
    current_team->run(std::min(workers, current_team->size()), loop);
    loop.rethrow_first();
    return;
  }
  std::vector<std::thread> pool;
  try {
    pool.reserve(static_cast<std::size_t>(workers - 1));
    for (int t = 1; t < workers; ++t) {
      try {
        pool.emplace_back([&loop, t] { loop.drain(t); });
      } catch (const std::system_error&) {
        break;  // run on the threads already started
      }
    }
  } catch (...) {  // out of memory: the started threads must finish before `loop` goes
    loop.stop.store(true, std::memory_order_release);
    for (auto& th : pool) th.join();
    throw;
  }
  loop.drain(0);
  for (auto& th : pool) th.join();
  loop.rethrow_first();
}

}  // namespace ellipsa::core
