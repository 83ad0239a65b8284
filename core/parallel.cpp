#include "parallel.hpp"

#include <algorithm>
#include <atomic>
#include <exception>
#include <system_error>
#include <thread>
#include <vector>

namespace ellipsa::core {

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
  std::atomic<Index> next{0};
  std::atomic<bool> stop{false};
  std::vector<std::exception_ptr> errors(static_cast<std::size_t>(count));
  auto run = [&](int worker) {
    for (;;) {
      if (stop.load(std::memory_order_acquire)) return;
      const Index i = next.fetch_add(1, std::memory_order_relaxed);
      if (i >= count) return;
      try {
        task(i, worker);
      } catch (...) {
        errors[static_cast<std::size_t>(i)] = std::current_exception();
        stop.store(true, std::memory_order_release);
      }
    }
  };
  std::vector<std::thread> pool;
  pool.reserve(static_cast<std::size_t>(workers - 1));
  for (int t = 1; t < workers; ++t) {
    try {
      pool.emplace_back(run, t);
    } catch (const std::system_error&) {
      break;  // run on the threads already started
    }
  }
  run(0);
  for (auto& th : pool) th.join();
  for (auto& e : errors)
    if (e) std::rethrow_exception(e);
}

}  // namespace ellipsa::core
