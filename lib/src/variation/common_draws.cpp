#include "variation/common_draws.hpp"

#include <cstring>

#if defined(__x86_64__)
#include <immintrin.h>
#endif

#include "cpu_dispatch.hpp"

namespace lotwise::detail {

namespace {

// Coordinates j.. one at a time, up to the first that is not common (every path's tail).
std::size_t prefix_one_by_one(const std::uint64_t* outputs, const std::int64_t* normal,
                              std::size_t j, std::size_t count, double* out) {
  for (; j < count; ++j) {
    if (!draw_common(outputs[j], normal[j] != 0, out + j)) return j;
  }
  return count;
}

}  // namespace

#if defined(__GNUC__) || defined(__clang__)

namespace {

using u64x4 = std::uint64_t __attribute__((vector_size(32)));
using i64x4 = std::int64_t __attribute__((vector_size(32)));
using f64x4 = double __attribute__((vector_size(32)));

// An unsigned 64-bit integer to the nearest double, as the scalar conversion rounds: the
// high and low 32-bit halves become exact doubles (put in the mantissas of 2^84 and
// 2^52, both offsets then taken off the high one, exactly), and their sum rounds once.
// In place through pointers: a function passing AVX vectors by value would change the
// ABI between the clones.
inline void to_double(const u64x4* x, f64x4* out) {
  const u64x4 high_bits = (*x >> 32) | 0x4530000000000000ull;
  const u64x4 low_bits = (*x & 0xFFFFFFFFull) | 0x4330000000000000ull;
  f64x4 high, low;
  std::memcpy(&high, &high_bits, sizeof high);
  std::memcpy(&low, &low_bits, sizeof low);
  *out = (high - 0x1.00000001p84) + low;
}

std::size_t prefix_vectors(const std::uint64_t* outputs, const std::int64_t* normal,
                           std::size_t count, double* out) {
  const double* const width = boost::random::detail::normal_table<double>::table_x;
  std::size_t j = 0;
  for (; j + 4 <= count; j += 4) {
    u64x4 u;
    i64x4 is_normal;
    std::memcpy(&u, outputs + j, sizeof u);
    std::memcpy(&is_normal, normal + j, sizeof is_normal);
    const u64x4 bucket = u & 0xFFu;
    const u64x4 layer = bucket >> 1;
    const f64x4 w = {width[layer[0]], width[layer[1]], width[layer[2]], width[layer[3]]};
    const f64x4 next = {width[layer[0] + 1], width[layer[1] + 1], width[layer[2] + 1],
                        width[layer[3] + 1]};
    const u64x4 fraction = (u & ~(std::uint64_t{1} << 11)) >> 8;
    f64x4 x;
    to_double(&fraction, &x);
    x = x * 0x1.0p-56 * w;
    // Boost's sign times x (times its sigma 1) is x with the sign bit flipped for an even
    // bucket, exactly; plus its mean 0, which turns -0 into +0.
    const u64x4 flip = ((bucket & 1u) ^ 1u) << 63;
    u64x4 x_bits;
    std::memcpy(&x_bits, &x, sizeof x_bits);
    x_bits ^= flip;
    f64x4 gaussian;
    std::memcpy(&gaussian, &x_bits, sizeof gaussian);
    gaussian += 0.0;
    i64x4 ok = x < next;
    f64x4 value = gaussian;
    if (is_normal[0] & is_normal[1] & is_normal[2] & is_normal[3]) {
      // all normal: no uniform draw to make
    } else {
      f64x4 uniform;
      to_double(&u, &uniform);
      uniform *= 0x1.0p-64;
      ok = (is_normal & ok) | (~is_normal & (uniform < 1.0));
      value = is_normal != 0 ? gaussian : uniform;
    }
    std::memcpy(out + j, &value, sizeof value);
    if (!(ok[0] & ok[1] & ok[2] & ok[3])) {
      std::size_t l = 0;
      while (ok[l]) ++l;
      return j + l;
    }
  }
  return prefix_one_by_one(outputs, normal, j, count, out);
}

#if defined(__x86_64__) && !defined(LOTWISE_NO_CPU_CLONES)
#define LOTWISE_PREFIX_AVX2 1

// The same on AVX2 with intrinsics: a vector's four acceptance tests are one movemask
// (the portable vectors above extract every lane), the uniform value is always made (one
// branch fewer), and the widths are read by scalar loads from the layers stored to memory
// (measured faster than two gathers, and than lanes extracted from the register).
// to_double() on AVX2 registers (the same vector types underneath).
__attribute__((target("avx2"))) inline __m256d to_double_avx2(__m256i x) {
  const u64x4 bits = reinterpret_cast<u64x4>(x);
  f64x4 value;
  to_double(&bits, &value);
  return reinterpret_cast<__m256d>(value);
}

__attribute__((target("avx2"))) std::size_t prefix_avx2(const std::uint64_t* outputs,
                                                        const std::int64_t* normal,
                                                        std::size_t count, double* out) {
  const double* const width = boost::random::detail::normal_table<double>::table_x;
  const __m256i byte = _mm256_set1_epi64x(0xFF);
  const __m256i no_bit_11 = _mm256_set1_epi64x(~(std::int64_t{1} << 11));
  const __m256i one = _mm256_set1_epi64x(1);
  std::size_t j = 0;
  for (; j + 4 <= count; j += 4) {
    const __m256i u = _mm256_loadu_si256(reinterpret_cast<const __m256i*>(outputs + j));
    const __m256d is_normal =
        _mm256_castsi256_pd(_mm256_loadu_si256(reinterpret_cast<const __m256i*>(normal + j)));
    const __m256i bucket = _mm256_and_si256(u, byte);
    const __m256i layer = _mm256_srli_epi64(bucket, 1);
    alignas(32) std::uint64_t at[4];
    _mm256_store_si256(reinterpret_cast<__m256i*>(at), layer);
    const __m256d w = _mm256_set_pd(width[at[3]], width[at[2]], width[at[1]], width[at[0]]);
    const __m256d next =
        _mm256_set_pd(width[at[3] + 1], width[at[2] + 1], width[at[1] + 1], width[at[0] + 1]);
    const __m256i fraction = _mm256_srli_epi64(_mm256_and_si256(u, no_bit_11), 8);
    const __m256d x =
        _mm256_mul_pd(_mm256_mul_pd(to_double_avx2(fraction), _mm256_set1_pd(0x1.0p-56)), w);
    const __m256i flip = _mm256_slli_epi64(_mm256_andnot_si256(bucket, one), 63);
    const __m256d gaussian =
        _mm256_add_pd(_mm256_xor_pd(x, _mm256_castsi256_pd(flip)), _mm256_setzero_pd());
    const __m256d uniform = _mm256_mul_pd(to_double_avx2(u), _mm256_set1_pd(0x1.0p-64));
    const __m256d ok = _mm256_blendv_pd(_mm256_cmp_pd(uniform, _mm256_set1_pd(1.0), _CMP_LT_OQ),
                                        _mm256_cmp_pd(x, next, _CMP_LT_OQ), is_normal);
    _mm256_storeu_pd(out + j, _mm256_blendv_pd(uniform, gaussian, is_normal));
    const int accepted = _mm256_movemask_pd(ok);
    if (accepted != 0xF) return j + static_cast<std::size_t>(__builtin_ctz(~accepted));
  }
  return prefix_one_by_one(outputs, normal, j, count, out);
}

// Eight at a time on AVX-512 (F and DQ): the conversions from 64-bit integers are single
// instructions that round as the scalar ones do, the tests are mask registers, and the
// last vector is masked rather than finished one by one. No multiply feeds an add here,
// so no fused multiply-add can arise.
// GCC 12 takes the undefined start values inside some AVX-512 intrinsics for uninitialised
// reads (a known false alarm).
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
__attribute__((target("avx512f,avx512dq"))) std::size_t prefix_avx512(
    const std::uint64_t* outputs, const std::int64_t* normal, std::size_t count, double* out) {
  const double* const width = boost::random::detail::normal_table<double>::table_x;
  const __m512i byte = _mm512_set1_epi64(0xFF);
  const __m512i no_bit_11 = _mm512_set1_epi64(~(std::int64_t{1} << 11));
  const __m512i one = _mm512_set1_epi64(1);
  for (std::size_t j = 0; j < count; j += 8) {
    const std::size_t left = count - j;
    const __mmask8 live = left >= 8 ? __mmask8(0xFF) : static_cast<__mmask8>((1u << left) - 1);
    const __m512i u = _mm512_maskz_loadu_epi64(live, outputs + j);
    const __m512i kind = _mm512_maskz_loadu_epi64(live, normal + j);
    const __mmask8 is_normal = _mm512_test_epi64_mask(kind, kind);
    const __m512i bucket = _mm512_and_si512(u, byte);
    const __m512i layer = _mm512_srli_epi64(bucket, 1);
    alignas(64) std::uint64_t at[8];
    _mm512_store_si512(at, layer);
    const __m512d w = _mm512_set_pd(width[at[7]], width[at[6]], width[at[5]], width[at[4]],
                                    width[at[3]], width[at[2]], width[at[1]], width[at[0]]);
    const __m512d next =
        _mm512_set_pd(width[at[7] + 1], width[at[6] + 1], width[at[5] + 1], width[at[4] + 1],
                      width[at[3] + 1], width[at[2] + 1], width[at[1] + 1], width[at[0] + 1]);
    const __m512i fraction = _mm512_srli_epi64(_mm512_and_si512(u, no_bit_11), 8);
    const __m512d x = _mm512_mul_pd(
        _mm512_mul_pd(_mm512_cvtepi64_pd(fraction), _mm512_set1_pd(0x1.0p-56)), w);
    const __m512i flip = _mm512_slli_epi64(_mm512_andnot_si512(bucket, one), 63);
    const __m512d gaussian = _mm512_add_pd(
        _mm512_castsi512_pd(_mm512_xor_si512(_mm512_castpd_si512(x), flip)), _mm512_setzero_pd());
    const __m512d uniform = _mm512_mul_pd(_mm512_cvtepu64_pd(u), _mm512_set1_pd(0x1.0p-64));
    const __mmask8 below_one = _mm512_cmp_pd_mask(uniform, _mm512_set1_pd(1.0), _CMP_LT_OQ);
    const __mmask8 ok =
        (is_normal & _mm512_cmp_pd_mask(x, next, _CMP_LT_OQ)) | (~is_normal & below_one) | ~live;
    _mm512_mask_storeu_pd(out + j, live, _mm512_mask_blend_pd(is_normal, uniform, gaussian));
    if (ok != 0xFF) return j + static_cast<std::size_t>(__builtin_ctz(~static_cast<unsigned>(ok)));
  }
  return count;
}
#pragma GCC diagnostic pop
#endif

bool can_take(DrawPath path) {
  switch (path) {
#ifdef LOTWISE_PREFIX_AVX2
    case DrawPath::avx512:
      return __builtin_cpu_supports("avx512f") && __builtin_cpu_supports("avx512dq");
    case DrawPath::avx2: return __builtin_cpu_supports("avx2");
#endif
    case DrawPath::portable: return true;
    default: return false;
  }
}

// Without allocating: the first draw may come where nothing may allocate.
DrawPath fastest_path() {
  for (DrawPath path : {DrawPath::avx512, DrawPath::avx2}) {
    if (can_take(path)) return path;
  }
  return DrawPath::portable;
}

}  // namespace

std::vector<DrawPath> draw_paths_here() {
  std::vector<DrawPath> paths;
  for (DrawPath path : {DrawPath::portable, DrawPath::avx2, DrawPath::avx512}) {
    if (can_take(path)) paths.push_back(path);
  }
  return paths;
}

std::size_t draw_common_prefix(DrawPath path, const std::uint64_t* outputs,
                               const std::int64_t* normal, std::size_t count, double* out) {
  switch (path) {
#ifdef LOTWISE_PREFIX_AVX2
    case DrawPath::avx512: return prefix_avx512(outputs, normal, count, out);
    case DrawPath::avx2: return prefix_avx2(outputs, normal, count, out);
#endif
    default: return prefix_vectors(outputs, normal, count, out);
  }
}

std::size_t draw_common_prefix(const std::uint64_t* outputs, const std::int64_t* normal,
                               std::size_t count, double* out) {
  static const DrawPath fastest = fastest_path();
  return draw_common_prefix(fastest, outputs, normal, count, out);
}

#else

std::vector<DrawPath> draw_paths_here() { return {DrawPath::portable}; }

std::size_t draw_common_prefix(DrawPath, const std::uint64_t* outputs, const std::int64_t* normal,
                               std::size_t count, double* out) {
  return prefix_one_by_one(outputs, normal, 0, count, out);
}

std::size_t draw_common_prefix(const std::uint64_t* outputs, const std::int64_t* normal,
                               std::size_t count, double* out) {
  return draw_common_prefix(DrawPath::portable, outputs, normal, count, out);
}

#endif

}  // namespace lotwise::detail
