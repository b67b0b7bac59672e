#pragma once
// Private: the natural logarithm of a measurement (the CMRR's decibels), with the same bits
// one value at a time (finish) and sixteen builds side by side (finish_lanes), where the
// C library's log, one call per build, cost about 5 % of an in-amp run.
//
// The method is the textbook one: x = 2^k m with m in [sqrt(2)/2, sqrt(2)), f = m - 1,
// s = f / (2 + f), log(1 + f) = 2 atanh(s) = f - (f^2/2 - s (f^2/2 + R(s^2))) with R the
// atanh Taylor series past its first term, and k ln 2 added in two parts so that k ln2_hi
// is exact. Only IEEE additions, multiplications and one division, no fused multiply-add:
// every processor and every clone gives the same bits. Within one unit in the last place of
// the exact value (tests/cpp/engine/natural_log_test.cpp, against long double logl).
#include <cstddef>
#include <cstdint>
#include <cstring>

namespace lotwise::detail {

/// log(x) for a positive normal x (2.2250738585072014e-308 <= x <= 1.7976931348623157e308);
/// any other input gives an unspecified value without trapping. natural_log sends those to
/// std::log.
inline double log_of_normal(double x) {
  // Offsetting the bits by those of (just below) sqrt(2)/2 leaves k + 1023 in the exponent
  // field and the fraction of m in place; adding the offset back makes m.
  constexpr std::uint64_t low_m = 0x3fe6a09e00000000ull;
  constexpr std::uint64_t fraction = 0x000fffffffffffffull;
  std::uint64_t bits;
  std::memcpy(&bits, &x, sizeof bits);
  const std::uint64_t shifted = bits - low_m + 0x3ff0000000000000ull;
  const std::uint64_t m_bits = (shifted & fraction) + low_m;
  // k as a double without a 64-bit conversion (none in AVX2): k + 1023 in the low bits of
  // 2^52, then 2^52 + 1023 taken off, exactly.
  const std::uint64_t k_bits = 0x4330000000000000ull | (shifted >> 52);
  double m, k;
  std::memcpy(&m, &m_bits, sizeof m);
  std::memcpy(&k, &k_bits, sizeof k);
  k -= 0x1.00000000003ffp52;
  const double f = m - 1.0;  // exact (m within a factor 2 of 1)
  const double s = f / (2.0 + f);
  const double z = s * s;
  // 2 atanh(s) = 2s + s (2z/3 + 2z^2/5 + ...): nine terms leave under 2^-55 of the result
  // for |s| <= 3 - 2 sqrt(2).
  const double r =
      z * (2.0 / 3.0 +
           z * (2.0 / 5.0 +
                z * (2.0 / 7.0 +
                     z * (2.0 / 9.0 +
                          z * (2.0 / 11.0 +
                               z * (2.0 / 13.0 + z * (2.0 / 15.0 + z * (2.0 / 17.0 + z * (2.0 / 19.0)))))))));
  const double half_f2 = 0.5 * f * f;
  constexpr double ln2_high = 0x1.62e42fee00000p-1;  // 32 bits of ln 2: k ln2_high is exact
  constexpr double ln2_low = 0x1.a39ef35793c76p-33;  // ln 2 - ln2_high, rounded
  return k * ln2_high - ((half_f2 - (s * (half_f2 + r) + k * ln2_low)) - f);
}

/// The natural logarithm, as std::log for zero, negative, subnormal, infinite and NaN
/// inputs.
double natural_log(double x);

/// out[i] = natural_log(x[i]) for i < count, side by side; the same bits.
void natural_log_each(const double* x, double* out, std::size_t count);

}  // namespace lotwise::detail
