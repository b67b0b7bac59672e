#pragma once
// Private: LOTWISE_AVX2_CLONES marks a hot function to be compiled twice, for plain
// x86-64 and for AVX2, the loader picking one per machine (GNU ifunc). AVX2 without FMA
// does the same IEEE operations as SSE2, so both clones give the same bits; only wider
// vectors. Elsewhere the marker is empty, and so it is when LOTWISE_NO_CPU_CLONES is
// defined: a build for checking that the plain x86-64 code gives the same reports.
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && defined(__linux__) && \
    !defined(LOTWISE_NO_CPU_CLONES)
#define LOTWISE_AVX2_CLONES __attribute__((target_clones("avx2", "default"), flatten))
// For loops of integer operations only, where no contraction into fused multiply-adds can
// arise: an AVX-512 clone as well.
#define LOTWISE_INTEGER_CLONES \
  __attribute__((target_clones("avx512f", "avx2", "default"), flatten))
#else
#define LOTWISE_AVX2_CLONES
#define LOTWISE_INTEGER_CLONES
#endif
