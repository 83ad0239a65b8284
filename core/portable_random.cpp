#include "portable_random.hpp"

#include <limits>

#include "error.hpp"

namespace ellipsa::core {

std::uint64_t PortableRandom::below(std::uint64_t n) {
  if (n == 0) throw Error(ErrorKind::Argument, "random integer below 0 requested");
  // Values at or above `limit` belong to an incomplete block and are redrawn.
  const std::uint64_t tail = (std::numeric_limits<std::uint64_t>::max() % n + 1) % n;
  const std::uint64_t limit = std::numeric_limits<std::uint64_t>::max() - tail + 1;  // 0 means 2^64
  for (;;) {
    const std::uint64_t v = engine_();
    if (limit == 0 || v < limit) return v % n;
  }
}

}  // namespace ellipsa::core
