#pragma once
// Private: maps standard random coordinates to parameter values.
#include <cstdint>
#include <string>
#include <vector>

#include <boost/random/mersenne_twister.hpp>
#include <boost/random/normal_distribution.hpp>
#include <boost/random/uniform_01.hpp>

#include "lotwise/circuit.hpp"
#include "lotwise/variation.hpp"

namespace lotwise::detail {

/// True if `name` matches `pattern`, where '*' stands for any run of characters
/// other than '.'.
bool matches(const std::string& pattern, const std::string& name);

/// Indices of the parameters a variation applies to; throws DesignError if a target
/// matches nothing or the tolerance cannot apply (relative spread on a zero nominal).
std::vector<std::size_t> resolve_targets(const Circuit& circuit, const Variation& variation);

/// Checks a variation's numbers (tolerance, sigmas); throws DesignError.
void validate_variation(const Variation& variation);

/// One random coordinate: value = nominal + scale * u, with u standard normal, or
/// value = nominal + scale * (2u - 1) with u standard uniform.
struct Coordinate {
  std::size_t parameter;
  Distribution distribution;
  double scale;
};

using Engine = boost::random::mt19937_64;

/// The seed of chunk `chunk`'s stream: depends only on (seed, chunk).
std::uint64_t chunk_seed(std::uint64_t seed, std::uint64_t chunk);

class Sampler {
 public:
  Sampler(const Circuit& circuit, const std::vector<Variation>& variations);

  std::size_t dimension() const { return coordinates_.size(); }
  const std::vector<Coordinate>& coordinates() const { return coordinates_; }

  /// Overwrites the varied entries of `theta` (which holds the nominal values) with a draw.
  void draw(Engine& engine, const double* nominal, double* theta) const {
    for (const Coordinate& c : coordinates_) {
      double u;
      if (c.distribution == Distribution::normal) {
        u = normal_(engine);
      } else {
        u = 2.0 * uniform_(engine) - 1.0;
      }
      theta[c.parameter] = nominal[c.parameter] + c.scale * u;
    }
  }

 private:
  std::vector<Coordinate> coordinates_;
  // Both are stateless for our use: Boost's normal_distribution is a ziggurat that
  // keeps no cached second value, so draws depend only on the engine.
  mutable boost::random::normal_distribution<double> normal_;
  mutable boost::random::uniform_01<double> uniform_;
};

}  // namespace lotwise::detail
