#include "variation/sampler.hpp"

#include <cmath>

#include "lotwise/error.hpp"

namespace lotwise {

const char* to_string(Distribution distribution) {
  switch (distribution) {
    case Distribution::normal: return "normal";
    case Distribution::uniform: return "uniform";
  }
  return "?";
}

namespace detail {

bool matches(const std::string& pattern, const std::string& name) {
  // Iterative glob with backtracking to the last '*'.
  std::size_t p = 0, n = 0, star = std::string::npos, mark = 0;
  while (n < name.size()) {
    if (p < pattern.size() && pattern[p] == '*') {
      star = p++;
      mark = n;
    } else if (p < pattern.size() && pattern[p] == name[n]) {
      ++p;
      ++n;
    } else if (star != std::string::npos && name[mark] != '.') {
      p = star + 1;
      n = ++mark;
    } else {
      return false;
    }
  }
  while (p < pattern.size() && pattern[p] == '*') ++p;
  return p == pattern.size();
}

void validate_variation(const Variation& v) {
  if (v.targets.empty()) throw DesignError("a variation needs at least one target parameter");
  if (!std::isfinite(v.tolerance) || !(v.tolerance > 0.0)) {
    throw DesignError("tolerance must be a positive number");
  }
  if (v.relative && v.tolerance >= 1.0 && v.distribution == Distribution::uniform) {
    throw DesignError("a uniform relative tolerance of 100 % or more would draw zero or "
                      "negative values");
  }
  if (v.distribution == Distribution::normal && (!std::isfinite(v.sigmas) || !(v.sigmas > 0.0))) {
    throw DesignError("sigmas (standard deviations covered by the tolerance) must be > 0");
  }
}

std::vector<std::size_t> resolve_targets(const Circuit& circuit, const Variation& v) {
  validate_variation(v);
  std::vector<std::size_t> found;
  const auto& params = circuit.parameters();
  for (const auto& target : v.targets) {
    std::size_t hits = 0;
    for (std::size_t i = 0; i < params.size(); ++i) {
      if (!matches(target, params[i].name)) continue;
      ++hits;
      if (v.relative && params[i].nominal == 0.0) {
        throw DesignError("'" + params[i].name + "' has a nominal value of 0, so a relative "
                          "tolerance cannot spread it; give an absolute tolerance in its unit (" +
                          params[i].unit + "), e.g. \"100u\"");
      }
      bool seen = false;
      for (std::size_t f : found) seen = seen || f == i;
      if (!seen) found.push_back(i);
    }
    if (hits == 0) {
      std::string names;
      for (std::size_t i = 0; i < params.size() && i < 12; ++i) {
        names += (i ? ", " : "") + params[i].name;
      }
      if (params.size() > 12) names += ", ...";
      throw DesignError("target '" + target + "' matches no parameter (parameters: " + names +
                        ")");
    }
  }
  return found;
}

std::uint64_t chunk_seed(std::uint64_t seed, std::uint64_t chunk) {
  // SplitMix64 finaliser applied twice: decorrelates neighbouring seeds and chunks.
  auto mix = [](std::uint64_t z) {
    z += 0x9E3779B97F4A7C15ULL;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
  };
  return mix(mix(seed) ^ chunk);
}

Sampler::Sampler(const Circuit& circuit, const std::vector<Variation>& variations) {
  std::vector<std::size_t> owner(circuit.parameters().size(), static_cast<std::size_t>(-1));
  for (std::size_t k = 0; k < variations.size(); ++k) {
    const Variation& v = variations[k];
    std::vector<std::size_t> targets;
    try {
      targets = resolve_targets(circuit, v);
    } catch (const DesignError& e) {
      throw DesignError("variation " + std::to_string(k + 1) + ": " + e.what());
    }
    for (std::size_t p : targets) {
      if (owner[p] != static_cast<std::size_t>(-1)) {
        throw DesignError("parameter '" + circuit.parameters()[p].name + "' is spread by both "
                          "variation " + std::to_string(owner[p] + 1) + " and variation " +
                          std::to_string(k + 1) + "; give each parameter one variation");
      }
      owner[p] = k;
      const double base = v.relative ? std::abs(circuit.parameters()[p].nominal) : 1.0;
      const double scale = v.distribution == Distribution::normal
                               ? base * v.tolerance / v.sigmas
                               : base * v.tolerance;
      coordinates_.push_back(Coordinate{p, v.distribution, scale});
    }
  }
}

}  // namespace detail
}  // namespace lotwise
