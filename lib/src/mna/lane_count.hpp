#pragma once
// Private: how many parameter vectors the lane solver factors and solves side by side
// (a multiple of the SIMD width of common machines; 16 measured faster than 8).
#include <cstddef>

namespace lotwise::detail {

constexpr std::size_t solve_lanes = 16;

}  // namespace lotwise::detail
