#pragma once
// Counts the test program's heap allocations, so a test can show that a per-sample path
// allocates nothing. allocation_counter.cpp replaces global operator new and, on glibc
// without sanitizers, malloc itself (Eigen allocates through malloc, not operator new);
// compile it into the test executable.
#include <cstddef>

namespace lotwise::testing {

struct AllocationCounts {
  std::size_t news = 0;     ///< calls of operator new
  std::size_t mallocs = 0;  ///< calls of malloc, calloc, realloc, aligned_alloc
};

AllocationCounts allocation_counts();

/// The allocations made between two readings.
inline AllocationCounts operator-(const AllocationCounts& after, const AllocationCounts& before) {
  return {after.news - before.news, after.mallocs - before.mallocs};
}

/// False where malloc cannot be replaced (sanitizer builds, C libraries other than
/// glibc): then only operator new is counted.
bool malloc_counted();

}  // namespace lotwise::testing
