#include "variation/common_draws.hpp"

#include <cstring>

#include "cpu_dispatch.hpp"

namespace lotwise::detail {

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

}  // namespace

LOTWISE_AVX2_CLONES std::size_t draw_common_prefix(const std::uint64_t* outputs,
                                                   const std::int64_t* normal, std::size_t count,
                                                   double* out) {
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
  for (; j < count; ++j) {
    if (!draw_common(outputs[j], normal[j] != 0, out + j)) return j;
  }
  return count;
}

#else

std::size_t draw_common_prefix(const std::uint64_t* outputs, const std::int64_t* normal,
                               std::size_t count, double* out) {
  for (std::size_t j = 0; j < count; ++j) {
    if (!draw_common(outputs[j], normal[j] != 0, out + j)) return j;
  }
  return count;
}

#endif

}  // namespace lotwise::detail
