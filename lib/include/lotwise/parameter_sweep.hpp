#pragma once
// Yield and measurement statistics against one or two design or tolerance settings
// (a resistor class against a gain setting, say).
#include <string>
#include <vector>

#include "lotwise/design.hpp"
#include "lotwise/result.hpp"
#include "lotwise/run_options.hpp"
#include "lotwise/sweep_axis.hpp"

namespace lotwise {

struct ParameterSweepPoint {
  std::vector<double> settings;  ///< one per axis
  YieldResult result;
};

struct ParameterSweepResult {
  std::vector<ParameterSweepAxis> axes;
  /// Every combination, the first axis varying slowest.
  std::vector<ParameterSweepPoint> points;
};

/// Runs `options` at every combination of the axes' values (one or two axes). Each point
/// compiles its own study from the changed design (compiling costs one nominal solve per
/// analysis, far less than a run) and uses the same seed, so the points differ by the
/// setting alone (common random numbers). Throws DesignError for a pattern that matches
/// nothing or a tolerance axis that no variation covers, and whatever Study throws for
/// a setting that makes the design invalid.
ParameterSweepResult sweep_parameters(const Design& design,
                                      const std::vector<ParameterSweepAxis>& axes,
                                      const RunOptions& options);

/// The sweep as a plain-text table: one row per point, with the yield and its interval
/// and each measurement's mean and standard deviation.
std::string sweep_table(const ParameterSweepResult& sweep);

}  // namespace lotwise
