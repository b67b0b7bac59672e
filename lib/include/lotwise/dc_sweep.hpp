#pragma once
// The saturating DC transfer sweep: a source stepped through a list of values with every
// op-amp linear within its output limits and clamped at them, following hysteresis.
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "lotwise/network.hpp"

namespace lotwise {

class Study;

/// How an op-amp's output is modelled at one step of a sweep.
enum class OutputState : std::uint8_t {
  linear,  ///< the op-amp's own model (ideal, finite gain) within its limits
  high,    ///< held at its high limit
  low,     ///< held at its low limit
};

const char* to_string(OutputState state);

enum class SweepDirection : std::uint8_t { up, down };

struct SweepPoint {
  double input = 0.0;   ///< the source's value, V or A
  double output = 0.0;  ///< V(output) or V(output plus) - V(output minus), V
  SweepDirection direction = SweepDirection::up;
};

struct TransferCurve {
  std::string source;
  std::vector<std::string> output;
  std::vector<std::string> opamps;  ///< every op-amp, in circuit order
  std::vector<SweepPoint> points;
  /// points.size() x opamps.size(), row-major: each op-amp's state at each step.
  std::vector<OutputState> states;

  OutputState state(std::size_t point, std::size_t opamp) const {
    return states[point * opamps.size() + opamp];
  }
};

/// Steps `source` through `path` in the order given, keeping every op-amp's state from one
/// step to the next, so a Schmitt trigger switches at a different level going up than
/// going down. At each step the states settle: a held op-amp whose differential input no
/// longer holds it at its limit turns linear, a linear one beyond a limit is held there,
/// and one that turns linear only to find its output pushed back past the limit it left
/// (positive feedback) switches to the other limit. The first step starts from every
/// limited op-amp at its low limit. `output` is one node or a (plus, minus) pair. A step
/// direction is up when its value is at least the previous one's. Throws CircuitError if
/// no consistent state exists at a step (an oscillator has none) or the equations are
/// singular with no limit to blame, DesignError for unknown names.
TransferCurve dc_transfer(const Network& network, const std::vector<double>& parameters,
                          const std::string& source, const std::vector<std::string>& output,
                          const std::vector<double>& path);

/// Sweeps `source` up through `values` (ascending) and back down through the same values.
TransferCurve dc_sweep(const Network& network, const std::vector<double>& parameters,
                       const std::string& source, const std::vector<std::string>& output,
                       const std::vector<double>& values);

/// dc_sweep of a study's network at its nominal parameters.
TransferCurve dc_sweep(const Study& study, const std::string& source,
                       const std::vector<std::string>& output, const std::vector<double>& values);

}  // namespace lotwise
