#pragma once
// Private: how a study's measurements are computed from a few solves per sample.
#include <complex>
#include <cstddef>
#include <memory>
#include <vector>

#include "lotwise/design.hpp"
#include "lotwise/network.hpp"
#include "mna/lane_count.hpp"

namespace lotwise::detail {

class LaneSolver;

/// One matrix per sample: DC (frequency 0, real) or small-signal at a frequency. A DC
/// analysis may hold op-amp outputs (trip points): their branch rows are replaced.
struct Analysis {
  double frequency = 0.0;
  std::vector<std::size_t> held;        ///< op-amp elements whose outputs are held (sorted)
  std::vector<Excitation> excitations;  ///< one solve each, into workspace slot = index
};

/// A value read from one solve: V(plus) - V(minus).
struct Probe {
  std::size_t analysis;
  std::size_t excitation;
  std::size_t plus;   ///< unknown index or Network::npos (ground)
  std::size_t minus;
};

/// A quantity of a trip-point analysis. With the deciding op-amp's output held at level L
/// and the driving source at s the network is linear, so the quantity is
/// rest + s * source + L * level (three probes of one factorisation).
struct AffineProbes {
  std::size_t rest = 0;    ///< every source at its value, the driving source at 0
  std::size_t source = 0;  ///< a unit driving source alone
  std::size_t level = 0;   ///< a unit held level alone
};

/// A linear op-amp that a trip measurement relies on: its output must stay within its
/// limits at the trip states, or the measurement is marked saturated.
struct Watch {
  std::size_t element = 0;
  AffineProbes output;
  bool moves_input = false;   ///< its output reaches the deciding op-amp's inputs
  bool moves_output = false;  ///< its output reaches the measured output
};

struct CompiledMeasurement {
  MeasurementKind kind = MeasurementKind::gain;
  std::size_t first = 0;   ///< primary probe
  std::size_t second = 0;  ///< second probe (cmrr: common-mode; offsets: the signal gain)
  /// Offsets: the value parameters of the input sources (second is npos for one input);
  /// the signal they apply at the operating point is removed from the output.
  std::size_t signal_plus = Network::npos;
  std::size_t signal_minus = Network::npos;
  double frequency = 0.0;
  /// bandwidth: the driving excitation and output, and the nominal bandwidth as a
  /// starting bracket for every sample's root search.
  Excitation drive;
  std::size_t plus = Network::npos;
  std::size_t minus = Network::npos;
  double nominal_bandwidth = 0.0;
  double target = 0.0;  ///< gain_error
  /// Reads the all-linear network: withheld when an op-amp saturates at the operating point.
  bool linear = true;
  // Trip-point kinds.
  std::size_t opamp = Network::npos;         ///< deciding op-amp element
  std::size_t source_value = Network::npos;  ///< parameter of the driving source
  std::size_t offset = Network::npos;        ///< the op-amp's offset parameter
  std::size_t open_loop_gain = Network::npos;
  OpAmpModel model = OpAmpModel::ideal;
  AffineProbes input;   ///< V(+) - V(-) of the deciding op-amp
  AffineProbes output;  ///< the measured output (output_high / output_low)
  std::vector<Watch> watches;
};

/// An op-amp whose output is checked against its limits at the operating point.
struct LimitCheck {
  std::size_t element;
  std::size_t probe;
};

struct Plan {
  std::vector<Analysis> analyses;
  std::vector<Probe> probes;
  std::vector<CompiledMeasurement> measurements;
  /// Limited op-amps, checked when any measurement reads the linear network.
  std::vector<LimitCheck> limit_checks;
  std::size_t slots = 1;  ///< most excitations of any analysis
};

/// Checks a measurement against the circuit; throws DesignError naming the fault.
void validate_measurement(const Circuit& circuit, const Measurement& measurement);
/// Checks a spec against the measurements; throws DesignError naming the fault.
void validate_spec(const std::vector<Measurement>& measurements, const Spec& spec);

/// Builds the plan; measurements must have been validated. Trip-point measurements are
/// checked at nominal values (a driving source that does not reach its op-amp, a trip
/// point that depends on another comparator's state) and throw DesignError.
Plan make_plan(const Network& network, const std::vector<Measurement>& measurements);

/// Evaluates a plan for one parameter vector. Owns its scratch space; one per thread.
class Evaluator {
 public:
  /// `changing`: the parameters that may differ from nominal between evaluations (all
  /// when null); evaluate_lanes checks only those per vector.
  Evaluator(const Network& network, const Plan& plan,
            const std::vector<std::size_t>* changing = nullptr);
  ~Evaluator();
  Evaluator(Evaluator&&) noexcept;
  /// Writes one value per measurement into `values`. Allocates nothing. A measurement
  /// withheld because an op-amp it relies on saturated gets NaN and its saturated() flag.
  SolveStatus evaluate(const double* theta, double* values);

  /// Parameter vectors evaluate_lanes takes at once.
  static constexpr std::size_t lanes = solve_lanes;
  /// As evaluate() for `count` (1..lanes) vectors: thetas[l] -> values[l], statuses[l],
  /// with bit-identical results. The vectors are factored and solved side by side on the
  /// reused patterns; a vector whose pivots are poor (or whose values are out of range)
  /// is evaluated alone. Allocates nothing.
  void evaluate_lanes(const double* const* thetas, double* const* values, SolveStatus* statuses,
                      std::size_t count);
  /// False when evaluate_lanes goes one vector at a time (no reusable pattern).
  bool uses_lanes() const { return lane_solver_ != nullptr; }
  /// After evaluate_lanes: lane l's saturated() flags and saturated_opamp().
  const unsigned char* saturated_lane(std::size_t l) const {
    if (lane_saturated_opamp_[l] == Network::npos) return no_saturation();
    return lane_saturated_.data() + l * plan_.measurements.size();
  }
  /// A row of clear saturation flags, one per measurement.
  const unsigned char* no_saturation() const {
    return lane_saturated_.data() + lanes * plan_.measurements.size();
  }
  std::size_t saturated_opamp_lane(std::size_t l) const { return lane_saturated_opamp_[l]; }
  /// Per measurement, after evaluate(): 1 where the value was withheld for saturation.
  const std::vector<unsigned char>& saturated() const { return saturated_; }
  bool any_saturated() const { return saturated_opamp_ != Network::npos; }
  /// The op-amp element last found beyond its limits (npos if none), for messages.
  std::size_t saturated_opamp() const { return saturated_opamp_; }

 private:
  /// The measurements from probe_values_ (filled by the solves for `theta`).
  SolveStatus finish(const double* theta, double* values);
  /// The op-amp element beyond its output limits at the operating point (the last such
  /// in the plan's limit checks), or npos: probe p at probes[p * stride] (one build's
  /// probes, or one lane of the lanes' probes).
  template <typename P>
  std::size_t saturated_at_operating_point(const double* theta, const P* probes,
                                           std::size_t stride) const;
  /// finish() for the solved lanes (ok[l]) when reads_lanes_, from the lanes' probes
  /// (lane_probes_, or lane_real_probes_), with lane l's flags kept.
  template <typename P>
  void finish_lanes(const double* const* thetas, const P* probes, double* const* values,
                    SolveStatus* statuses, const unsigned char* ok, std::size_t count);
  /// Keeps the saturation flags of the last evaluation as lane l's.
  void keep_lane(std::size_t l);
  double bandwidth(const CompiledMeasurement& m, const double* theta, double dc_gain,
                   SolveStatus& status);
  double trip_point(const CompiledMeasurement& m, const double* theta, std::size_t index);
  /// True if every watch of `m` selected by `input` / `output` is within its limits at
  /// source value s and held level L.
  bool watches_hold(const CompiledMeasurement& m, const double* theta, double s, double level,
                    bool input);

  const Network& network_;
  const Plan& plan_;
  NetworkWorkspace workspace_;
  std::vector<std::complex<double>> probe_values_;
  std::vector<unsigned char> saturated_;
  std::size_t saturated_opamp_ = Network::npos;
  std::unique_ptr<LaneSolver> lane_solver_;  ///< null when the lanes cannot be used
  std::vector<std::complex<double>> lane_probes_;  ///< probes x lanes
  std::vector<double> lane_real_probes_;  ///< probes x lanes, when real_lanes_
  std::vector<unsigned char> lane_saturated_;      ///< (lanes + 1) x measurements
  std::vector<std::size_t> lane_saturated_opamp_;
  /// Every measurement is read from the probes alone: the lanes finish side by side.
  bool reads_lanes_ = false;
  /// reads_lanes_, and every analysis at DC: the lanes' probes are kept real.
  bool real_lanes_ = false;
};

}  // namespace lotwise::detail
