// Replacement allocation functions that count their calls (see allocation_counter.hpp).
#include "allocation_counter.hpp"

#include <atomic>
#include <cstddef>
#include <cstdlib>
#include <new>

namespace {
std::atomic<std::size_t> new_calls{0};
std::atomic<std::size_t> malloc_calls{0};
}  // namespace

// ---- operator new / delete -------------------------------------------------------
void* operator new(std::size_t size) {
  ++new_calls;
  if (void* p = std::malloc(size ? size : 1)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t size) { return operator new(size); }
void* operator new(std::size_t size, const std::nothrow_t&) noexcept {
  ++new_calls;
  return std::malloc(size ? size : 1);
}
void* operator new[](std::size_t size, const std::nothrow_t& tag) noexcept {
  return operator new(size, tag);
}
void operator delete(void* p) noexcept { std::free(p); }
void operator delete[](void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
void operator delete[](void* p, std::size_t) noexcept { std::free(p); }
void operator delete(void* p, const std::nothrow_t&) noexcept { std::free(p); }
void operator delete[](void* p, const std::nothrow_t&) noexcept { std::free(p); }

// ---- malloc, on glibc without sanitizers (which replace malloc themselves) ---------
#if defined(__SANITIZE_ADDRESS__)
#define LOTWISE_TEST_NO_MALLOC_HOOK 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer) || __has_feature(memory_sanitizer)
#define LOTWISE_TEST_NO_MALLOC_HOOK 1
#endif
#endif
#if defined(__GLIBC__) && !defined(LOTWISE_TEST_NO_MALLOC_HOOK)
#define LOTWISE_TEST_COUNTS_MALLOC 1
extern "C" {
void* __libc_malloc(std::size_t size);
void* __libc_calloc(std::size_t count, std::size_t size);
void* __libc_realloc(void* p, std::size_t size);
void* __libc_memalign(std::size_t alignment, std::size_t size);
void __libc_free(void* p);

void* malloc(std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_malloc(size);
}
void* calloc(std::size_t count, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_calloc(count, size);
}
void* realloc(void* p, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_realloc(p, size);
}
void* aligned_alloc(std::size_t alignment, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_memalign(alignment, size);
}
void free(void* p) noexcept { __libc_free(p); }
}
#endif

namespace lotwise::testing {

AllocationCounts allocation_counts() { return {new_calls.load(), malloc_calls.load()}; }

bool malloc_counted() {
#ifdef LOTWISE_TEST_COUNTS_MALLOC
  return true;
#else
  return false;
#endif
}

}  // namespace lotwise::testing
