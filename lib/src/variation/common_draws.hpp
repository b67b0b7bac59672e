#pragma once
// Private: the monte_carlo sampler's common case, several coordinates at once. A common
// draw takes one engine output: for a normal coordinate the ziggurat's first-try
// acceptance (about 97 % of draws), for a uniform one Boost's uniform_01 below 1. Runs of
// common draws are made side by side (4 or 8 at a time, by what the processor has), bit
// for bit the values Boost.Random gives one draw at a time; the sampler draws the rest
// one by one with Boost.
#include <cstddef>
#include <cstdint>
#include <vector>

#include <boost/random/normal_distribution.hpp>

namespace lotwise::detail {

/// One coordinate's common case from one engine output, into *out; false when the draw
/// needs Boost's slower path (or, uniform, another output). Boost's ziggurat (128 layers,
/// mirrored): the low 8 bits choose the layer and sign, bits 8..63 without bit 11 over
/// 2^56 are the fraction, and the draw is accepted at once when the fraction times the
/// layer's width lies inside the next layer; then Boost's sign, (bucket & 1) * 2 - 1, and
/// its mean 0 and sigma 1 (which also turn -0 into +0). uniform_01 on a 64-bit engine:
/// the output times 1 / 2^64, kept below 1.
inline bool draw_common(std::uint64_t u, bool normal, double* out) {
  if (!normal) {
    *out = static_cast<double>(u) * 0x1.0p-64;
    return *out < 1.0;
  }
  const double* const width = boost::random::detail::normal_table<double>::table_x;
  const unsigned bucket = static_cast<unsigned>(u & 0xFFu);
  const unsigned layer = bucket >> 1;
  const double x = static_cast<double>((u & ~(std::uint64_t{1} << 11)) >> 8) * 0x1.0p-56 * width[layer];
  const double sign = (bucket & 1u) != 0 ? 1.0 : -1.0;
  *out = x * sign * 1.0 + 0.0;
  return x < width[layer + 1];
}

/// Writes coordinate j from outputs[j], side by side, normal where normal[j] is all ones
/// (-1) and uniform where it is 0, up to the first coordinate that needs more than its one
/// output or the ziggurat's slower path. Returns how many coordinates it drew (count
/// when all); `out` past them is unspecified.
std::size_t draw_common_prefix(const std::uint64_t* outputs, const std::int64_t* normal,
                               std::size_t count, double* out);

/// The ways draw_common_prefix can run: portable vectors, AVX2, AVX-512 (F and DQ).
/// All give the same values; the fastest this machine has is used.
enum class DrawPath { portable, avx2, avx512 };
/// The paths this build can take on this machine (portable always).
std::vector<DrawPath> draw_paths_here();
/// draw_common_prefix along one of draw_paths_here() (for tests).
std::size_t draw_common_prefix(DrawPath path, const std::uint64_t* outputs,
                               const std::int64_t* normal, std::size_t count, double* out);

}  // namespace lotwise::detail
