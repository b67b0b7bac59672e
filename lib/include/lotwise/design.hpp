#pragma once
// Everything a yield study needs, as the user wrote it.
#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "lotwise/circuit.hpp"
#include "lotwise/measurement.hpp"
#include "lotwise/run_options.hpp"
#include "lotwise/spec.hpp"
#include "lotwise/sweep_axis.hpp"
#include "lotwise/variation.hpp"

namespace lotwise {

/// Defaults for a run that a design file may carry; the caller may override each.
struct RunSettings {
  std::uint64_t samples = 10000;
  std::uint64_t seed = 1;
  unsigned threads = 0;  ///< 0: one per hardware thread
  Sampler sampler = Sampler::monte_carlo;
  std::uint32_t replicates = 0;  ///< 0: automatic (see RunOptions::replicates)
  double confidence = 0.95;        ///< level of the reported intervals
  double target_half_width = 0.0;  ///< adaptive stop (see RunOptions::target_half_width)
  std::uint32_t tolerance_digits = 0;  ///< adaptive stop (see RunOptions::tolerance_digits)
  std::uint64_t builds_per_lot = 0;    ///< see RunOptions::builds_per_lot
};

struct Design {
  Design() = default;
  /// Keeps the brace form Design{title, circuit, variations, measurements, specs, run}
  /// working as fields are added.
  Design(std::string title_, Circuit circuit_, std::vector<Variation> variations_ = {},
         std::vector<Measurement> measurements_ = {}, std::vector<Spec> specs_ = {},
         RunSettings run_ = {})
      : title(std::move(title_)),
        circuit(std::move(circuit_)),
        variations(std::move(variations_)),
        measurements(std::move(measurements_)),
        specs(std::move(specs_)),
        run(run_) {}

  std::string title;
  Circuit circuit;
  std::vector<Variation> variations;
  std::vector<Measurement> measurements;
  std::vector<Spec> specs;
  RunSettings run;
  /// Correlated part-to-part deviations (Gaussian copula).
  std::vector<Correlation> correlations;
  /// Operating temperature: fixed, swept or drawn; the reference for coefficients.
  Temperature temperature;
  /// Parameter sweep axes for `lotwise sweep` (design file [[sweep]]); not used by a run.
  std::vector<ParameterSweepAxis> sweep;
};

}  // namespace lotwise
