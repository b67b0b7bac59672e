#pragma once
// How a parameter spreads from part to part.
#include <string>
#include <vector>

namespace lotwise {

enum class Distribution {
  normal,   ///< Gaussian; the tolerance is stated at `sigmas` standard deviations
  uniform,  ///< flat within +-tolerance
};

const char* to_string(Distribution distribution);

/// A spread applied to every parameter whose name matches one of `targets`.
/// A target is a parameter name or a pattern in which '*' matches any run of
/// characters other than '.': "R*" selects R1, RG, ...; "U*.offset" every op-amp offset.
struct Variation {
  std::vector<std::string> targets;
  Distribution distribution = Distribution::normal;
  /// Half-width of the tolerance band: a fraction of nominal when `relative`
  /// (0.01 for 1 %), else an absolute amount in the parameter's unit.
  double tolerance = 0.0;
  bool relative = true;
  /// For normal: how many standard deviations the tolerance covers (3 is usual).
  double sigmas = 3.0;
};

}  // namespace lotwise
