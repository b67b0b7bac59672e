#pragma once
// Private: target patterns, checks of a variation, and per-chunk random streams.
#include <cstdint>
#include <string>
#include <vector>

#include <boost/random/mersenne_twister.hpp>

#include "lotwise/circuit.hpp"
#include "lotwise/variation.hpp"

namespace lotwise::detail {

/// True if `name` matches `pattern`, where '*' stands for any run of characters
/// other than '.'.
bool matches(const std::string& pattern, const std::string& name);

/// Indices of the parameters a variation applies to; throws DesignError if a target
/// matches nothing or the tolerance cannot apply (relative spread on a zero nominal).
std::vector<std::size_t> resolve_targets(const Circuit& circuit, const Variation& variation);

/// Indices of the parameters a list of names or patterns selects, each once, in the
/// order found; throws DesignError if one selects nothing.
std::vector<std::size_t> resolve_names(const Circuit& circuit,
                                       const std::vector<std::string>& names);

/// Checks a variation's numbers and their combination; throws DesignError.
void validate_variation(const Variation& variation);

/// Checks an operating-temperature setting; throws DesignError.
void validate_temperature(const Temperature& temperature);

using Engine = boost::random::mt19937_64;

/// The seed of stream `chunk` of `seed`: depends only on (seed, chunk).
std::uint64_t chunk_seed(std::uint64_t seed, std::uint64_t chunk);

/// A uniform draw on the open interval (0, 1): the top 53 bits of one engine output,
/// centred in their cell, so that inverse distribution functions never see 0 or 1.
inline double uniform_open(Engine& engine) {
  return (static_cast<double>(engine() >> 11) + 0.5) * 0x1.0p-53;
}

}  // namespace lotwise::detail
