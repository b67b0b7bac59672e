#pragma once
// Private: the few operations the lane solver applies to L values side by side. Each
// does, lane by lane, exactly the scalar operation of the one-at-a-time path, so results
// are bit-identical. For real lanes under GCC and Clang they are written on explicit
// vectors of four doubles (the compilers' vector extension): left to itself, the compiler
// unrolls the short lane loops into scalar code in some contexts instead of vectorising
// them. The operations stay element-wise IEEE ones, with no fused multiply-add, so the
// bits do not depend on the vector width. Other compilers and complex lanes use loops.
#include <algorithm>
#include <complex>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <type_traits>

#include "mna/slot_fill.hpp"

namespace lotwise::detail {

/// |x|^2 without a square root (complex) and |x|^2 for real x.
inline double magnitude2(double x) { return x * x; }
inline double magnitude2(const std::complex<double>& x) {
  return x.real() * x.real() + x.imag() * x.imag();
}

// ---- any lane type, as loops ---------------------------------------------------------

// `value` by value: a reference could alias `out`, which keeps the stores scalar.
template <std::size_t L, typename T>
inline void lanes_set(T* __restrict out, const T value) {
  for (std::size_t l = 0; l < L; ++l) out[l] = value;
}

/// out -= a * b
template <std::size_t L, typename T>
inline void lanes_sub_product(T* __restrict out, const T* __restrict a, const T* __restrict b) {
  for (std::size_t l = 0; l < L; ++l) out[l] -= a[l] * b[l];
}

/// out *= f
template <std::size_t L, typename T>
inline void lanes_scale(T* __restrict out, const T* __restrict f) {
  for (std::size_t l = 0; l < L; ++l) out[l] *= f[l];
}

/// out += factor * x
template <std::size_t L, typename T>
inline void lanes_add_scaled(T* __restrict out, double factor, const double* __restrict x) {
  for (std::size_t l = 0; l < L; ++l) out[l] += factor * x[l];
}

/// out += value
template <std::size_t L, typename T>
inline void lanes_add(T* __restrict out, const double value) {
  for (std::size_t l = 0; l < L; ++l) out[l] += value;
}

/// out = 1 / x
template <std::size_t L, typename T>
inline void lanes_reciprocal(T* __restrict out, const T* __restrict x) {
  for (std::size_t l = 0; l < L; ++l) out[l] = T(1) / x[l];
}

/// out = max(out, |x|^2) (a NaN never enters)
template <std::size_t L, typename T>
inline void lanes_max_magnitude2(double* __restrict out, const T* __restrict x) {
  for (std::size_t l = 0; l < L; ++l) out[l] = std::max(out[l], magnitude2(x[l]));
}

/// Sets each slot of `fills` to its start value `initial[slot]` plus its terms, in order
/// (factor times the parameter's lanes in `theta` or its reciprocal's in `reciprocal`,
/// times j frequency for the imaginary kinds), and takes scale2 = max(scale2, |v|^2) over
/// the slots with terms.
template <std::size_t L, typename T>
inline void lanes_fill_slots(const SlotFill* fills, std::size_t count, const SlotTerm* terms,
                             const T* initial, const double* reciprocal, const double* theta,
                             double frequency, T* __restrict v, double* __restrict scale2) {
  (void)frequency;  // real lanes have no imaginary terms
  for (std::size_t i = 0; i < count; ++i) {
    const SlotFill& fill = fills[i];
    T* out = v + static_cast<std::size_t>(fill.slot) * L;
    lanes_set<L>(out, initial[fill.slot]);
    for (std::uint32_t k = fill.begin; k < fill.end; ++k) {
      const SlotTerm& t = terms[k];
      const double* x = (reads_reciprocal(t.kind) ? reciprocal : theta) + t.index * L;
      if (t.kind == SlotTerm::real_reciprocal || t.kind == SlotTerm::real_value) {
        lanes_add_scaled<L>(out, t.factor, x);
      } else if constexpr (!std::is_same<T, double>::value) {
        for (std::size_t l = 0; l < L; ++l) out[l] += T(0.0, frequency * t.factor * x[l]);
      }
    }
    if (fill.end > fill.begin) lanes_max_magnitude2<L>(scale2, out);
  }
}

/// Clears good[l] (an all-ones or zero mask) where pivot p[l] fails PatternLU::factor()'s
/// check: |p|^2 above tiny2, at least u2 col2, finite; a NaN fails.
template <std::size_t L, typename T>
inline void lanes_check_pivot(std::int64_t* __restrict good, const T* __restrict p,
                              const double* __restrict tiny2, const double* __restrict col2,
                              double u2) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  for (std::size_t l = 0; l < L; ++l) {
    const double p2 = magnitude2(p[l]);
    good[l] &= ((p2 > tiny2[l]) & (p2 >= u2 * col2[l]) & (p2 < inf)) ? std::int64_t(-1)
                                                                      : std::int64_t(0);
  }
}

#if !defined(__GNUC__)

/// Clears good[l] where v[l] is not above `above` or not finite; a NaN fails.
template <std::size_t L>
inline void lanes_check_range(std::int64_t* __restrict good, const double* __restrict v,
                              double above) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  for (std::size_t l = 0; l < L; ++l) {
    good[l] &= ((v[l] > above) & (v[l] < inf)) ? std::int64_t(-1) : std::int64_t(0);
  }
}

#else

// ---- real lanes, four at a time --------------------------------------------------------

typedef double Pack __attribute__((vector_size(32)));
typedef std::int64_t PackMask __attribute__((vector_size(32)));
constexpr std::size_t pack_width = 4;

// Unaligned loads and stores, one vector move each. Vectors pass by reference: by
// value their ABI would depend on whether AVX is enabled.
inline void pack_load(Pack& x, const double* p) { __builtin_memcpy(&x, p, sizeof x); }
inline void pack_store(double* p, const Pack& x) { __builtin_memcpy(p, &x, sizeof x); }
inline void mask_load(PackMask& x, const std::int64_t* p) { __builtin_memcpy(&x, p, sizeof x); }
inline void mask_store(std::int64_t* p, const PackMask& x) { __builtin_memcpy(p, &x, sizeof x); }

template <std::size_t L>
inline void lanes_set(double* __restrict out, const double value) {
  static_assert(L % pack_width == 0, "lanes come in whole vectors");
  const Pack v = {value, value, value, value};
  for (std::size_t l = 0; l < L; l += pack_width) pack_store(out + l, v);
}

template <std::size_t L>
inline void lanes_sub_product(double* __restrict out, const double* __restrict a,
                              const double* __restrict b) {
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack o, x, y;
    pack_load(o, out + l);
    pack_load(x, a + l);
    pack_load(y, b + l);
    pack_store(out + l, o - x * y);
  }
}

template <std::size_t L>
inline void lanes_scale(double* __restrict out, const double* __restrict f) {
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack o, x;
    pack_load(o, out + l);
    pack_load(x, f + l);
    pack_store(out + l, o * x);
  }
}

template <std::size_t L>
inline void lanes_add_scaled(double* __restrict out, double factor, const double* __restrict x) {
  const Pack f = {factor, factor, factor, factor};
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack o, y;
    pack_load(o, out + l);
    pack_load(y, x + l);
    pack_store(out + l, o + f * y);
  }
}

template <std::size_t L>
inline void lanes_add(double* __restrict out, const double value) {
  const Pack v = {value, value, value, value};
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack o;
    pack_load(o, out + l);
    pack_store(out + l, o + v);
  }
}

template <std::size_t L>
inline void lanes_reciprocal(double* __restrict out, const double* __restrict x) {
  const Pack one = {1.0, 1.0, 1.0, 1.0};
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack y;
    pack_load(y, x + l);
    pack_store(out + l, one / y);
  }
}

template <std::size_t L>
inline void lanes_max_magnitude2(double* __restrict out, const double* __restrict x) {
  for (std::size_t l = 0; l < L; l += pack_width) {
    // std::max(a, b) is (a < b) ? b : a, here by mask.
    Pack a, v;
    pack_load(a, out + l);
    pack_load(v, x + l);
    const Pack b = v * v;
    const PackMask take_b = a < b;
    pack_store(out + l, (Pack)(((PackMask)b & take_b) | ((PackMask)a & ~take_b)));
  }
}

template <std::size_t L>
inline void lanes_check_pivot(std::int64_t* __restrict good, const double* __restrict p,
                              const double* __restrict tiny2, const double* __restrict col2,
                              double u2) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  const Pack u = {u2, u2, u2, u2}, top = {inf, inf, inf, inf};
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack v, t, c;
    PackMask g;
    pack_load(v, p + l);
    pack_load(t, tiny2 + l);
    pack_load(c, col2 + l);
    mask_load(g, good + l);
    const Pack p2 = v * v;
    mask_store(good + l, g & ((p2 > t) & (p2 >= u * c) & (p2 < top)));
  }
}

/// lanes_fill_slots for real lanes: each slot summed in registers and stored once.
template <std::size_t L>
inline void lanes_fill_slots(const SlotFill* fills, std::size_t count, const SlotTerm* terms,
                             const double* initial, const double* reciprocal,
                             const double* theta, double /*frequency*/, double* __restrict v,
                             double* __restrict scale2) {
  static_assert(L == 4 * pack_width, "four vectors per slot");
  for (std::size_t i = 0; i < count; ++i) {
    const SlotFill& fill = fills[i];
    const double start = initial[fill.slot];
    Pack s0 = {start, start, start, start}, s1 = s0, s2 = s0, s3 = s0;
    for (std::uint32_t k = fill.begin; k < fill.end; ++k) {
      const SlotTerm& t = terms[k];
      const double* x = (reads_reciprocal(t.kind) ? reciprocal : theta) + t.index * L;
      const Pack f = {t.factor, t.factor, t.factor, t.factor};
      Pack y;
      pack_load(y, x);
      s0 = s0 + f * y;
      pack_load(y, x + 4);
      s1 = s1 + f * y;
      pack_load(y, x + 8);
      s2 = s2 + f * y;
      pack_load(y, x + 12);
      s3 = s3 + f * y;
    }
    double* out = v + static_cast<std::size_t>(fill.slot) * L;
    pack_store(out, s0);
    pack_store(out + 4, s1);
    pack_store(out + 8, s2);
    pack_store(out + 12, s3);
    if (fill.end > fill.begin) lanes_max_magnitude2<L>(scale2, out);
  }
}

/// Clears good[l] where v[l] is not above `above` or not finite; a NaN fails.
template <std::size_t L>
inline void lanes_check_range(std::int64_t* __restrict good, const double* __restrict v,
                              double above) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  const Pack low = {above, above, above, above}, top = {inf, inf, inf, inf};
  for (std::size_t l = 0; l < L; l += pack_width) {
    Pack x;
    PackMask g;
    pack_load(x, v + l);
    mask_load(g, good + l);
    mask_store(good + l, g & ((x > low) & (x < top)));
  }
}

#endif

}  // namespace lotwise::detail
