#pragma once
// What a yield run reports.
#include <cstdint>
#include <string>
#include <vector>

#include "lotwise/measurement.hpp"
#include "lotwise/spec.hpp"
#include "lotwise/statistics.hpp"

namespace lotwise {

struct MeasurementSummary {
  std::string name;
  MeasurementKind kind = MeasurementKind::gain;
  double nominal = 0.0;   ///< value with every parameter at nominal
  RunningStats stats;     ///< over the solvable samples
};

struct SpecSummary {
  Spec spec;
  std::uint64_t passed = 0;
  double fraction = 0.0;  ///< passed / samples evaluated
  Interval interval;
};

struct YieldResult {
  std::uint64_t samples = 0;     ///< samples evaluated (fewer than asked if stopped)
  std::uint64_t requested = 0;
  std::uint64_t seed = 0;
  std::uint32_t chunk_size = 0;
  bool complete = true;          ///< false if the run was stopped early
  double confidence = 0.95;

  std::uint64_t passed = 0;      ///< builds that met every spec
  double yield = 0.0;            ///< passed / samples
  Interval interval;             ///< Clopper-Pearson at `confidence`

  /// Draws that could not be evaluated; they count as failing builds.
  std::uint64_t singular = 0;       ///< circuit matrix singular for the draw
  std::uint64_t invalid_values = 0; ///< a drawn value outside its physical range (R <= 0)

  std::vector<SpecSummary> specs;
  std::vector<MeasurementSummary> measurements;

  /// With RunOptions::keep_samples: samples x measurements values, row-major
  /// (NaN where a draw could not be evaluated), and each build's pass flag.
  std::vector<double> values;
  std::vector<std::uint8_t> pass;
};

}  // namespace lotwise
