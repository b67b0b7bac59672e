#pragma once
// Private: the compiled MNA layout. Every matrix entry and right-hand-side term is a
// stamp that reads one or two parameters; filling a matrix for a new parameter vector is
// one pass over the stamp list, with no look-ups and no allocation.
#include <complex>
#include <cstddef>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "lotwise/circuit.hpp"
#include "lotwise/network.hpp"

namespace lotwise::detail {

enum class StampKind {
  constant,      ///< sign
  conductance,   ///< sign / p                     (resistor)
  value,         ///< sign * p                     (controlled-source gains)
  susceptance,   ///< sign * j w p, zero at DC      (capacitor)
  reactance,     ///< sign * j w p, zero at DC      (inductor branch equation)
  inverse_gain,  ///< sign * (1/A0 + j w / (2 pi GBW)) by op-amp model; p = A0, q = GBW
};

struct MatrixStamp {
  std::size_t row;
  std::size_t col;
  StampKind kind;
  std::size_t p;  ///< parameter index
  std::size_t q;  ///< second parameter index (inverse_gain)
  double sign;
  OpAmpModel model;  ///< inverse_gain only
};

/// A right-hand-side term driven by an independent source's value.
struct SourceStamp {
  std::size_t row;
  std::size_t element;  ///< the source element
  std::size_t p;        ///< its value parameter
  double sign;
};

/// A right-hand-side term from an op-amp's offset or bias current.
struct ErrorStamp {
  std::size_t row;
  std::size_t p;
  double sign;
};

/// An op-amp's output: where its branch equation sits and which parameters set its
/// limits (npos where a side is unlimited or has no headroom parameter).
struct OpAmpOutput {
  std::size_t element;
  std::size_t branch;  ///< row and column of the output current
  std::size_t out;     ///< unknown index of the output node
  std::size_t high;    ///< output_high or supply_high
  std::size_t headroom_high;
  std::size_t low;     ///< output_low or supply_low
  std::size_t headroom_low;
};

}  // namespace lotwise::detail

namespace lotwise {

struct Network::Layout {
  Circuit circuit;
  std::size_t nodes = 0;  ///< non-ground node unknowns come first
  std::size_t size = 0;   ///< nodes + branch currents
  std::vector<std::string> unknown_names;
  std::vector<std::size_t> branch_of_element;  ///< npos where the element has no branch
  std::vector<detail::MatrixStamp> matrix;
  std::vector<detail::SourceStamp> sources;
  std::vector<detail::ErrorStamp> errors;
  std::vector<detail::OpAmpOutput> opamps;
  std::vector<std::size_t> opamp_of_element;  ///< index into opamps, npos for other elements

  std::size_t node(const std::string& name) const;  ///< npos for ground
};

struct NetworkWorkspace::Data {
  Eigen::MatrixXd a;
  Eigen::PartialPivLU<Eigen::MatrixXd> lu;
  Eigen::VectorXd rhs;
  /// Set by factor_dc: 1 for the branch rows of held op-amp outputs.
  std::vector<unsigned char> held_row;
  Eigen::MatrixXd x;  ///< one column per slot
  Eigen::MatrixXcd ac;
  Eigen::PartialPivLU<Eigen::MatrixXcd> ac_lu;
  Eigen::VectorXcd ac_rhs;
  Eigen::MatrixXcd ac_x;
  double frequency = 0.0;
};

namespace detail {
/// Checks that every node has a DC path to ground and that no loop is made of
/// voltage-defined branches only; throws CircuitError naming what is wrong.
void check_topology(const Circuit& circuit);
}  // namespace detail

}  // namespace lotwise
