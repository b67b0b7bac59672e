#pragma once
// Private: how a study's measurements are computed from a few solves per sample.
#include <complex>
#include <cstddef>
#include <vector>

#include "lotwise/design.hpp"
#include "lotwise/network.hpp"

namespace lotwise::detail {

/// One matrix per sample: DC (frequency 0, real) or small-signal at a frequency.
struct Analysis {
  double frequency = 0.0;
  std::vector<Excitation> excitations;  ///< one solve each, into workspace slot = index
};

/// A value read from one solve: V(plus) - V(minus).
struct Probe {
  std::size_t analysis;
  std::size_t excitation;
  std::size_t plus;   ///< unknown index or Network::npos (ground)
  std::size_t minus;
};

struct CompiledMeasurement {
  MeasurementKind kind;
  std::size_t first;   ///< primary probe
  std::size_t second;  ///< second probe (cmrr: common-mode; offsets: the signal gain)
  /// Offsets: the value parameters of the input sources (second is npos for one input);
  /// the signal they apply at the operating point is removed from the output.
  std::size_t signal_plus;
  std::size_t signal_minus;
  double frequency;
  /// bandwidth: the driving excitation and output, and the nominal bandwidth as a
  /// starting bracket for every sample's root search.
  Excitation drive;
  std::size_t plus;
  std::size_t minus;
  double nominal_bandwidth;
};

struct Plan {
  std::vector<Analysis> analyses;
  std::vector<Probe> probes;
  std::vector<CompiledMeasurement> measurements;
  std::size_t slots = 1;  ///< most excitations of any analysis
};

/// Checks a measurement against the circuit; throws DesignError naming the fault.
void validate_measurement(const Circuit& circuit, const Measurement& measurement);
/// Checks a spec against the measurements; throws DesignError naming the fault.
void validate_spec(const std::vector<Measurement>& measurements, const Spec& spec);

/// Builds the plan; measurements must have been validated.
Plan make_plan(const Network& network, const std::vector<Measurement>& measurements);

/// Evaluates a plan for one parameter vector. Owns its scratch space; one per thread.
class Evaluator {
 public:
  Evaluator(const Network& network, const Plan& plan);
  /// Writes one value per measurement into `values`. Allocates nothing.
  SolveStatus evaluate(const double* theta, double* values);

 private:
  double bandwidth(const CompiledMeasurement& m, const double* theta, double dc_gain,
                   SolveStatus& status);

  const Network& network_;
  const Plan& plan_;
  NetworkWorkspace workspace_;
  std::vector<std::complex<double>> probe_values_;
};

}  // namespace lotwise::detail
