#pragma once
// Private: the compiled MNA layout. Every matrix entry and right-hand-side term is a
// stamp that reads one or two parameters; filling a matrix for a new parameter vector is
// one pass over the stamp list, with no look-ups and no allocation.
#include <algorithm>
#include <complex>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <string>
#include <type_traits>
#include <vector>

#include <Eigen/Dense>

#include "lotwise/circuit.hpp"
#include "lotwise/network.hpp"
#include "mna/sparse_lu.hpp"

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

namespace lotwise::detail {

/// An op-amp's output limits from its parameters, `value(p)` giving parameter p (one
/// rule for the one-at-a-time path and for the lanes).
template <typename Value>
OutputLimits limits_of(const OpAmpOutput& o, Value value) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  constexpr std::size_t npos = static_cast<std::size_t>(-1);
  OutputLimits l{-inf, inf};
  if (o.high != npos) l.high = value(o.high) - (o.headroom_high != npos ? value(o.headroom_high) : 0.0);
  if (o.low != npos) l.low = value(o.low) + (o.headroom_low != npos ? value(o.headroom_low) : 0.0);
  return l;
}

/// How to refill a PatternLU's values from a parameter vector: a copy of the constant
/// entries, then one pass per kind of term, each a flat list (no switch per entry).
/// Reciprocals (1/R, 1/A0) are taken once per parameter.
struct FillTerm {
  std::uint32_t slot;
  std::uint32_t index;  ///< parameter index, or index into `inverse` for reciprocal terms
  double factor;        ///< the stamp's sign, times 2 pi for susceptances
};

template <typename T>
struct PatternFill {
  std::vector<T> constants;          ///< per slot
  std::vector<std::size_t> inverse;  ///< parameters whose reciprocal the terms read
  std::vector<double> reciprocal;    ///< scratch, one per `inverse`
  std::vector<FillTerm> real_reciprocal;  ///< += factor / p
  std::vector<FillTerm> real_value;       ///< += factor * p
  std::vector<FillTerm> imag_value;       ///< += j f factor * p (AC only)
  std::vector<FillTerm> imag_reciprocal;  ///< += j f factor / p (AC only)
};

/// Fills `v` (one value per slot) with the matrix of `theta` at `frequency` (ignored
/// for DC): the constants, then each list of terms in order. `reciprocal` receives one
/// value per f.inverse. The one fill rule of the one-at-a-time path and the lane solver.
template <typename T>
void fill_values(const PatternFill<T>& f, const double* theta, double frequency, T* v,
                 double* reciprocal) {
  std::copy(f.constants.begin(), f.constants.end(), v);
  for (std::size_t k = 0; k < f.inverse.size(); ++k) reciprocal[k] = 1.0 / theta[f.inverse[k]];
  const double* r = reciprocal;
  for (const auto& t : f.real_reciprocal) v[t.slot] += t.factor * r[t.index];
  for (const auto& t : f.real_value) v[t.slot] += t.factor * theta[t.index];
  if constexpr (!std::is_same<T, double>::value) {
    for (const auto& t : f.imag_value) v[t.slot] += T(0.0, frequency * t.factor * theta[t.index]);
    for (const auto& t : f.imag_reciprocal) v[t.slot] += T(0.0, frequency * t.factor * r[t.index]);
  } else {
    (void)frequency;
  }
}

/// A reusable factorisation of one kind of matrix: DC with a set of held outputs, or AC.
template <typename T>
struct Pattern {
  std::vector<std::size_t> held;  ///< DC: the held op-amp elements, as prepared
  PatternLU<T> lu;
  PatternFill<T> fill;
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
  Eigen::MatrixXd rhs_block;  ///< one right-hand side per slot (solve_dc for several)
  /// Set by factor_dc: 1 for the branch rows of held op-amp outputs.
  std::vector<unsigned char> held_row;
  Eigen::MatrixXd x;  ///< one column per slot
  Eigen::MatrixXcd ac;
  Eigen::PartialPivLU<Eigen::MatrixXcd> ac_lu;
  Eigen::VectorXcd ac_rhs;
  Eigen::MatrixXcd ac_rhs_block;
  Eigen::MatrixXcd ac_x;
  double frequency = 0.0;
  // Reusable factorisations (Network::prepare_dc / prepare_ac); `*_active` is the one
  // the last factor call used, npos when it used the dense factorisation.
  std::vector<detail::Pattern<double>> dc_patterns;
  std::vector<detail::Pattern<std::complex<double>>> ac_patterns;
  std::size_t dc_active = static_cast<std::size_t>(-1);
  std::size_t ac_active = static_cast<std::size_t>(-1);
  /// Factorisations that replayed a pattern, and those that fell back to the dense one
  /// although a pattern was prepared (a poor pivot for this parameter vector).
  std::uint64_t pattern_factors = 0;
  std::uint64_t dense_fallbacks = 0;
};

namespace detail {
/// The terms of an excitation's right-hand side, in the order they are added:
/// add_parameter(row, p, sign) for sign * theta[p], add_constant(row, c) and, for held
/// op-amp outputs (`held` marks their branch rows; nullptr for none),
/// set_constant(row, level). Network fills right-hand sides from it one at a time and the
/// lane solver compiles it once.
template <typename AddParameter, typename AddConstant, typename SetConstant>
void visit_rhs(const Network::Layout& L, const Excitation& ex, const unsigned char* held,
               AddParameter add_parameter, AddConstant add_constant, SetConstant set_constant) {
  constexpr std::size_t npos = static_cast<std::size_t>(-1);
  for (const auto& s : L.sources) {
    bool constant = !ex.sources_at_value;
    double value = 0.0;
    for (const auto& o : ex.overrides) {
      if (o.first == s.element) {
        constant = true;
        value = o.second;
      }
    }
    if (constant) {
      add_constant(s.row, s.sign * value);
    } else {
      add_parameter(s.row, s.p, s.sign);
    }
  }
  if (ex.opamp_errors) {
    for (const auto& s : L.errors) {
      if (held && held[s.row]) continue;
      add_parameter(s.row, s.p, s.sign);
    }
  }
  if (held) {
    for (const auto& level : ex.output_levels) {
      const std::size_t i =
          level.first < L.opamp_of_element.size() ? L.opamp_of_element[level.first] : npos;
      if (i == npos || !held[L.opamps[i].branch]) continue;
      set_constant(L.opamps[i].branch, level.second);
    }
  }
}

/// Checks that every node has a DC path to ground and that no loop is made of
/// voltage-defined branches only; throws CircuitError naming what is wrong.
void check_topology(const Circuit& circuit);
}  // namespace detail

}  // namespace lotwise
