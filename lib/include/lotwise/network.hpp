#pragma once
// The modified-nodal-analysis form of a circuit, laid out once and solved many times
// for different parameter vectors. Thread-safe: every solve uses a caller's Workspace.
#include <complex>
#include <cstddef>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "lotwise/circuit.hpp"

namespace lotwise {

/// What drives the network in one solve.
struct Excitation {
  /// Independent sources at their parameter values (an operating point) when true,
  /// at zero (a small-signal solve) when false.
  bool sources_at_value = true;
  /// Sources (by element index) held at a given value instead, in either case.
  std::vector<std::pair<std::size_t, double>> overrides;
  /// Include op-amp offset voltages and bias currents.
  bool opamp_errors = true;
  /// Levels, in volts, of op-amp outputs held by the factorisation (see Network::factor_dc):
  /// (element index, level). A held output not listed is held at 0 V; a level for an output
  /// that is not held is ignored.
  std::vector<std::pair<std::size_t, double>> output_levels = {};
};

/// The levels an op-amp's output can reach; -inf / +inf on an unlimited side.
struct OutputLimits {
  double low;
  double high;
};

/// Outcome of one solve.
enum class SolveStatus {
  ok,
  singular,         ///< the matrix lost rank for this parameter vector
  invalid_value,    ///< a parameter is out of its physical range (R <= 0, ...)
};

const char* to_string(SolveStatus status);

/// Scratch matrices and solutions of one thread. Made by Network::make_workspace.
class NetworkWorkspace {
 public:
  struct Data;
  explicit NetworkWorkspace(std::unique_ptr<Data> data);
  NetworkWorkspace(NetworkWorkspace&&) noexcept;
  NetworkWorkspace& operator=(NetworkWorkspace&&) noexcept;
  ~NetworkWorkspace();
  Data& data() { return *data_; }

 private:
  std::unique_ptr<Data> data_;
};

class Network {
 public:
  /// Lays out the MNA system and checks the topology: every node needs a DC path to
  /// ground and no loop may consist of voltage-defined branches only. Throws
  /// CircuitError naming the node or the elements at fault.
  explicit Network(const Circuit& circuit);
  ~Network();
  Network(const Network&);
  Network& operator=(const Network&);
  Network(Network&&) noexcept;
  Network& operator=(Network&&) noexcept;

  const Circuit& circuit() const;
  /// Number of unknowns: non-ground nodes plus branch currents.
  std::size_t size() const;
  /// Unknown index of a node (ground gives npos).
  std::size_t node_index(const std::string& node) const;
  /// Human-readable name of unknown i ("node 'out'", "current of U1").
  std::string unknown_name(std::size_t i) const;

  /// Per-thread scratch space with room for `slots` solutions of each kind;
  /// solves allocate nothing once it is made.
  NetworkWorkspace make_workspace(std::size_t slots = 1) const;

  /// Checks `parameters` (one value per circuit parameter) for physical range.
  SolveStatus check_values(const double* parameters) const;

  /// Factors the DC matrix for `parameters`. Capacitors are open, inductors shorted.
  SolveStatus factor_dc(const double* parameters, NetworkWorkspace& ws) const;
  /// Factors the DC matrix with the outputs of the op-amps in `held_outputs` (element
  /// indices) held at fixed levels: each one's branch equation V(+) - V(-) - V(out)/A = -Vos
  /// is replaced by V(out) = level, the level coming from each solve's
  /// Excitation::output_levels. Its output current stays an unknown. Used for trip points
  /// (an op-amp at a limit) and the saturating sweep. Allocates nothing.
  SolveStatus factor_dc(const double* parameters, NetworkWorkspace& ws,
                        const std::vector<std::size_t>& held_outputs) const;
  /// Solves the factored DC system; returns a pointer to size() unknowns held by `ws`.
  const double* solve_dc(const double* parameters, const Excitation& excitation,
                         NetworkWorkspace& ws, std::size_t slot = 0) const;

  /// Chooses, once, a pivot order and fill pattern for the DC matrix with
  /// `held_outputs` held (as for factor_dc), from its values at `parameters` (usually
  /// nominal), and keeps them in `ws`. Later factor_dc calls on `ws` with the same held
  /// outputs then only refill the values and replay a fixed elimination; a pivot that is
  /// poor for a given parameter vector sends that call to the dense factorisation.
  /// Results agree with the dense path to rounding. Returns false, keeping the dense path,
  /// if the matrix at `parameters` has no acceptable pivot order (singular) or the values
  /// are out of range. Allocates; call it before the per-sample loop.
  bool prepare_dc(const double* parameters, NetworkWorkspace& ws,
                  const std::vector<std::size_t>& held_outputs = {}) const;
  /// As prepare_dc for the small-signal matrix, choosing the pivots at `frequency`; the
  /// pattern then serves factor_ac at every frequency.
  bool prepare_ac(const double* parameters, double frequency, NetworkWorkspace& ws) const;

  /// Solves the factored DC system for `count` excitations at once, into slots
  /// 0..count-1 of `ws` (count at most the workspace's slots; throws Error beyond): one
  /// pass over the factors for all of them. Same results as solve_dc per excitation.
  void solve_dc(const double* parameters, const Excitation* excitations, std::size_t count,
                NetworkWorkspace& ws) const;
  /// As the batched solve_dc, for the small-signal system.
  void solve_ac(const double* parameters, const Excitation* excitations, std::size_t count,
                NetworkWorkspace& ws) const;

  /// Factors the small-signal matrix at `frequency` Hz.
  SolveStatus factor_ac(const double* parameters, double frequency, NetworkWorkspace& ws) const;
  const std::complex<double>* solve_ac(const double* parameters, const Excitation& excitation,
                                       NetworkWorkspace& ws, std::size_t slot = 0) const;

  /// Convenience: node voltages of a DC operating point, by node order of circuit().nodes().
  /// Throws CircuitError if the network is singular for these values.
  std::vector<double> operating_point(const std::vector<double>& parameters) const;
  /// Convenience: V(out_plus) - V(out_minus) for a unit drive on `source` at `frequency`.
  std::complex<double> transfer(const std::vector<double>& parameters, const std::string& source,
                                const std::string& out_plus, const std::string& out_minus,
                                double frequency) const;

  /// Output limits of op-amp `element` for `parameters` (-inf / +inf where unlimited).
  OutputLimits output_limits(const double* parameters, std::size_t element) const;
  /// True if op-amp `element` has a finite high and a finite low output limit.
  bool has_output_limits(std::size_t element) const;

  /// Why the nominal network is singular, in words, naming the unknowns involved;
  /// `held_outputs` as for factor_dc (DC only).
  std::string diagnose_singular(const double* parameters, double frequency,
                                const std::vector<std::size_t>& held_outputs = {}) const;

  static constexpr std::size_t npos = static_cast<std::size_t>(-1);

  struct Layout;  ///< opaque: the compiled stamps (private to the library)
  const Layout& layout() const { return *layout_; }

 private:
  std::unique_ptr<Layout> layout_;
};

}  // namespace lotwise
