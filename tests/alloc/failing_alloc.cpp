// See failing_alloc.hpp. Real allocation: the AddressSanitizer interceptors when
// the program carries them (so that leaks and mismatches are still reported),
// else glibc's own entry points.
#include "failing_alloc.hpp"

#include <cerrno>
#include <cstddef>
#include <cstdlib>
#include <malloc.h>
#include <new>

extern "C" {
void* __interceptor_malloc(std::size_t) __attribute__((weak));
void* __interceptor_calloc(std::size_t, std::size_t) __attribute__((weak));
void* __interceptor_realloc(void*, std::size_t) __attribute__((weak));
void __interceptor_free(void*) __attribute__((weak));
void* __libc_malloc(std::size_t);
void* __libc_calloc(std::size_t, std::size_t);
void* __libc_realloc(void*, std::size_t);
void __libc_free(void*);
}

namespace {

thread_local bool t_armed = false;
thread_local std::int64_t t_target = 0;
thread_local std::int64_t t_count = 0;
thread_local bool t_fired = false;
bool g_malloc_too = false;
bool should_fail();

// malloc/calloc/realloc count only when asked for (see failing_alloc.hpp).
bool should_fail_malloc() { return g_malloc_too && should_fail(); }

// True when this allocation is the one to fail.
bool should_fail() {
  if (!t_armed) return false;
  ++t_count;
  if (t_target > 0 && t_count == t_target) {
    t_fired = true;
    return true;
  }
  return false;
}

// Live-byte accounting of the calling thread (failing_alloc::track_bytes).
thread_local bool t_tracking = false;
thread_local std::int64_t t_live = 0;
thread_local std::int64_t t_peak = 0;
void* counted(void* p) {
  if (t_tracking && p != nullptr) {
    t_live += static_cast<std::int64_t>(malloc_usable_size(p));
    if (t_live > t_peak) t_peak = t_live;
  }
  return p;
}
void uncount(void* p) {
  if (t_tracking && p != nullptr) t_live -= static_cast<std::int64_t>(malloc_usable_size(p));
}

void* real_malloc(std::size_t n) { return counted(__interceptor_malloc ? __interceptor_malloc(n) : __libc_malloc(n)); }
void* real_calloc(std::size_t n, std::size_t s) {
  return counted(__interceptor_calloc ? __interceptor_calloc(n, s) : __libc_calloc(n, s));
}
void* real_realloc(void* p, std::size_t n) {
  uncount(p);
  return counted(__interceptor_realloc ? __interceptor_realloc(p, n) : __libc_realloc(p, n));
}
void real_free(void* p) {
  uncount(p);
  if (__interceptor_free) __interceptor_free(p);
  else __libc_free(p);
}

void* new_impl(std::size_t n) {
  if (should_fail()) throw std::bad_alloc();
  void* p = real_malloc(n ? n : 1);
  if (!p) throw std::bad_alloc();
  return p;
}

void* new_aligned(std::size_t n, std::size_t align) {
  if (should_fail()) throw std::bad_alloc();
  void* p = nullptr;
  if (posix_memalign(&p, align < sizeof(void*) ? sizeof(void*) : align, n ? n : 1) != 0) throw std::bad_alloc();
  return counted(p);
}

}  // namespace

namespace failing_alloc {
void include_malloc(bool on) { g_malloc_too = on; }
void arm(std::int64_t k) {
  t_target = k;
  t_count = 0;
  t_fired = false;
  t_armed = true;
}
std::int64_t disarm() {
  t_armed = false;
  return t_count;
}
bool fired() { return t_fired; }
void track_bytes() {
  t_live = 0;
  t_peak = 0;
  t_tracking = true;
}
std::int64_t peak_bytes() {
  t_tracking = false;
  return t_peak;
}
}  // namespace failing_alloc

extern "C" {
void* malloc(std::size_t n) {
  if (should_fail_malloc()) {
    errno = ENOMEM;
    return nullptr;
  }
  return real_malloc(n);
}
void* calloc(std::size_t n, std::size_t s) {
  if (should_fail_malloc()) {
    errno = ENOMEM;
    return nullptr;
  }
  return real_calloc(n, s);
}
void* realloc(void* p, std::size_t n) {
  if (should_fail_malloc()) {
    errno = ENOMEM;
    return nullptr;
  }
  return real_realloc(p, n);
}
void free(void* p) { real_free(p); }
}

void* operator new(std::size_t n) { return new_impl(n); }
void* operator new[](std::size_t n) { return new_impl(n); }
void* operator new(std::size_t n, const std::nothrow_t&) noexcept {
  try {
    return new_impl(n);
  } catch (...) {
    return nullptr;
  }
}
void* operator new[](std::size_t n, const std::nothrow_t&) noexcept {
  try {
    return new_impl(n);
  } catch (...) {
    return nullptr;
  }
}
void* operator new(std::size_t n, std::align_val_t a) { return new_aligned(n, static_cast<std::size_t>(a)); }
void* operator new[](std::size_t n, std::align_val_t a) { return new_aligned(n, static_cast<std::size_t>(a)); }
void operator delete(void* p) noexcept { real_free(p); }
void operator delete[](void* p) noexcept { real_free(p); }
void operator delete(void* p, std::size_t) noexcept { real_free(p); }
void operator delete[](void* p, std::size_t) noexcept { real_free(p); }
void operator delete(void* p, std::align_val_t) noexcept { real_free(p); }
void operator delete[](void* p, std::align_val_t) noexcept { real_free(p); }
void operator delete(void* p, std::size_t, std::align_val_t) noexcept { real_free(p); }
void operator delete[](void* p, std::size_t, std::align_val_t) noexcept { real_free(p); }
