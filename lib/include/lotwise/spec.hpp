#pragma once
// Limits a measurement must meet for a build to pass.
#include <limits>
#include <string>

namespace lotwise {

struct Spec {
  std::string measurement;
  double min = -std::numeric_limits<double>::infinity();
  double max = std::numeric_limits<double>::infinity();

  bool has_min() const { return min != -std::numeric_limits<double>::infinity(); }
  bool has_max() const { return max != std::numeric_limits<double>::infinity(); }
  /// NaN never passes; an infinite value passes a limit it lies beyond on the good side.
  bool passes(double value) const { return value >= min && value <= max; }
};

}  // namespace lotwise
