// Test-only allocation-failure injection. Linking the static library
// ellipsa_failing_alloc replaces operator new / new[] (every form) and malloc,
// calloc and realloc for the whole program: when armed on a thread with k, the
// k-th allocation made by that thread fails (operator new throws
// std::bad_alloc, the nothrow forms and malloc return NULL); every other
// allocation goes to the real allocator (the sanitizer's when there is one, so
// the leak detector still sees everything).
#pragma once
#include <cstdint>

namespace failing_alloc {

// Counts allocations of the calling thread from now on; the k-th (k >= 1)
// fails. k = 0 only counts.
void arm(std::int64_t k);

// Whether malloc, calloc and realloc are counted (and failed) too; off by
// default. Eigen allocates through malloc, and Eigen 3.4's
// DenseStorage::resize frees the old block before allocating the new one
// without clearing its pointer: a failure there leaves a dangling pointer that
// the destructor frees again (a double free). Until that is avoided, only
// operator new is failed in CI; ELLIPSA_ALLOC_FAIL_MALLOC=1 shows the problem.
void include_malloc(bool on);

// Stops counting; returns the number of allocations attempted while armed
// (the failed one included).
std::int64_t disarm();

// True when the armed run reached its k-th allocation (it was made to fail).
bool fired();

// Live-byte accounting of the calling thread (malloc_usable_size of every
// block allocated and freed on it, whatever the allocation function): starts
// at 0 now; peak_bytes() stops it and returns the highest count reached.
// Blocks freed on other threads are not seen (measure with one thread).
void track_bytes();
std::int64_t peak_bytes();

}  // namespace failing_alloc
