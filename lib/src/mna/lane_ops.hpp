#pragma once
// Private: the few operations the lane solver applies to L values side by side. The
// restrict-qualified pointers tell the compiler the lanes of different slots never
// overlap, so each loop becomes a handful of vector instructions; the arithmetic per
// lane is the scalar one, in the same order.
#include <cstddef>

namespace lotwise::detail {

// `value` by value: a reference could alias `out`, which keeps the stores scalar.
template <std::size_t L, typename T>
inline void lanes_set(T* __restrict out, const T value) {
  for (std::size_t l = 0; l < L; ++l) out[l] = value;
}

template <std::size_t L, typename T>
inline void lanes_copy(T* __restrict out, const T* __restrict in) {
  for (std::size_t l = 0; l < L; ++l) out[l] = in[l];
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

}  // namespace lotwise::detail
