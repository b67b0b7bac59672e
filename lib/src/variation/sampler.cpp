#include "variation/sampler.hpp"

#include <cmath>

#include "lotwise/error.hpp"

namespace lotwise {
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

namespace {

bool normal_shaped(Distribution d) {
  return d == Distribution::normal || d == Distribution::truncated_normal ||
         d == Distribution::log_normal || d == Distribution::binned;
}

bool bounded(Distribution d) {
  return d == Distribution::uniform || d == Distribution::triangular ||
         d == Distribution::truncated_normal || d == Distribution::binned;
}

// The laws a lot or a temperature coefficient may follow: the plain ones.
void check_component_law(Distribution d, const char* what) {
  if (d != Distribution::normal && d != Distribution::uniform &&
      d != Distribution::triangular && d != Distribution::truncated_normal) {
    throw DesignError(std::string(what) + " must be normal, uniform, triangular or "
                      "truncated_normal, not " + to_string(d));
  }
}

void check_amount(double value, const char* what) {
  if (!std::isfinite(value) || value < 0.0) {
    throw DesignError(std::string(what) + " must be a finite number >= 0");
  }
}

}  // namespace

void validate_variation(const Variation& v) {
  if (v.targets.empty()) throw DesignError("a variation needs at least one target parameter");
  const bool fixed = v.distribution == Distribution::fixed;
  if (fixed) {
    if (v.tolerance != 0.0) {
      throw DesignError("a fixed parameter has no part-to-part spread: leave its tolerance at 0 "
                        "(lot_tolerance and tempco still apply)");
    }
  } else if (!std::isfinite(v.tolerance) || !(v.tolerance > 0.0)) {
    throw DesignError("tolerance must be a positive number");
  }
  if (v.relative && v.tolerance >= 1.0 && bounded(v.distribution)) {
    throw DesignError(std::string("a ") + to_string(v.distribution) + " relative tolerance of "
                      "100 % or more would draw zero or negative values");
  }
  check_amount(v.lot_tolerance, "lot_tolerance");
  check_amount(v.ratio_tolerance, "ratio_tolerance");
  check_amount(v.tempco_tolerance, "tempco_tolerance");
  check_amount(v.tempco_tracking, "tempco_tracking");
  if (!std::isfinite(v.tempco)) throw DesignError("tempco must be a finite number");
  if (v.lot_tolerance > 0.0) {
    check_component_law(v.lot_distribution, "lot_distribution");
    if (v.relative && v.lot_tolerance >= 1.0 && bounded(v.lot_distribution)) {
      throw DesignError("a relative lot_tolerance of 100 % or more would draw zero or "
                        "negative values");
    }
  }
  if (v.tempco_tolerance > 0.0) check_component_law(v.tempco_distribution, "tempco_distribution");
  const bool uses_sigmas = normal_shaped(v.distribution) ||
                           (v.lot_tolerance > 0.0 && normal_shaped(v.lot_distribution)) ||
                           (v.tempco_tolerance > 0.0 && normal_shaped(v.tempco_distribution));
  if (uses_sigmas && (!std::isfinite(v.sigmas) || !(v.sigmas > 0.0) || v.sigmas > 30.0)) {
    throw DesignError("sigmas (standard deviations covered by the tolerance) must lie in "
                      "(0, 30]");
  }
  if (v.distribution == Distribution::binned) {
    if (!std::isfinite(v.inner_tolerance) || !(v.inner_tolerance > 0.0) ||
        !(v.inner_tolerance < v.tolerance)) {
      throw DesignError("a binned spread needs 0 < inner_tolerance < tolerance (the tighter "
                        "class that was sorted out, e.g. 1 % inside a 5 % class)");
    }
  } else if (v.inner_tolerance != 0.0) {
    throw DesignError("inner_tolerance applies to the binned distribution only");
  }
  if (v.distribution == Distribution::log_normal && !v.relative) {
    throw DesignError("a log_normal spread needs a relative tolerance (a ratio, e.g. \"20%\")");
  }
  if (v.ratio_tolerance > 0.0) {
    if (v.distribution != Distribution::normal || !v.relative) {
      throw DesignError("a matched network (ratio_tolerance) needs a normal distribution and a "
                        "relative tolerance");
    }
    // Var(member) = shared^2 + own^2 = (t/k)^2 and Var(ratio) = 2 own^2 = (r/k)^2.
    if (v.ratio_tolerance > std::sqrt(2.0) * v.tolerance) {
      throw DesignError("ratio_tolerance may be at most sqrt(2) times the tolerance (members "
                        "with independent deviations already give that ratio spread)");
    }
  } else if (v.tempco_tracking > 0.0) {
    throw DesignError("tempco_tracking applies to a matched network (ratio_tolerance > 0) only");
  }
}

void validate_temperature(const Temperature& t) {
  constexpr double absolute_zero = -273.15;
  auto check = [&](double value, const char* what) {
    if (!std::isfinite(value) || !(value > absolute_zero)) {
      throw DesignError(std::string(what) + " must be a finite temperature above -273.15 degC");
    }
  };
  check(t.reference, "the reference temperature");
  for (double value : t.operating) check(value, "an operating temperature");
  if (t.drawn) {
    if (!t.operating.empty()) {
      throw DesignError("give either operating temperatures or a range to draw from, not both");
    }
    check(t.low, "the low end of the temperature range");
    check(t.high, "the high end of the temperature range");
    if (!(t.low < t.high)) {
      throw DesignError("the temperature range needs low < high");
    }
  }
}

std::vector<std::size_t> resolve_names(const Circuit& circuit,
                                       const std::vector<std::string>& names) {
  std::vector<std::size_t> found;
  const auto& params = circuit.parameters();
  for (const auto& target : names) {
    std::size_t hits = 0;
    for (std::size_t i = 0; i < params.size(); ++i) {
      if (!matches(target, params[i].name)) continue;
      ++hits;
      bool seen = false;
      for (std::size_t f : found) seen = seen || f == i;
      if (!seen) found.push_back(i);
    }
    if (hits == 0) {
      std::string list;
      for (std::size_t i = 0; i < params.size() && i < 12; ++i) {
        list += (i ? ", " : "") + params[i].name;
      }
      if (params.size() > 12) list += ", ...";
      throw DesignError("target '" + target + "' matches no parameter (parameters: " + list +
                        ")");
    }
  }
  return found;
}
std::vector<std::size_t> resolve_targets(const Circuit& circuit, const Variation& v) {
  validate_variation(v);
  const std::vector<std::size_t> found = resolve_names(circuit, v.targets);
  const bool relative_spread =
      v.relative && (v.distribution != Distribution::fixed || v.lot_tolerance > 0.0);
  for (const std::size_t i : found) {
    const Parameter& p = circuit.parameters()[i];
    if (relative_spread && p.nominal == 0.0) {
      throw DesignError("'" + p.name + "' has a nominal value of 0, so a relative "
                        "tolerance cannot spread it; give an absolute tolerance in its unit (" +
                        p.unit + "), e.g. \"100u\"");
    }
    if (v.tempco_relative && (v.tempco != 0.0 || v.tempco_tolerance > 0.0) && p.nominal == 0.0) {
      throw DesignError("'" + p.name + "' has a nominal value of 0, so a relative temperature "
                        "coefficient cannot move it; give an absolute one in " + p.unit +
                        " per kelvin, e.g. \"2u\"");
    }
    if (v.distribution == Distribution::log_normal && !(p.nominal > 0.0)) {
      throw DesignError("'" + p.name + "' needs a positive nominal value for a log_normal spread");
    }
  }
  if (v.ratio_tolerance > 0.0 && found.size() < 2) {
    throw DesignError("a matched network (ratio_tolerance) needs at least two parts");
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

}  // namespace detail
}  // namespace lotwise
