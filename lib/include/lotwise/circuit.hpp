#pragma once
// A circuit as drawn: named nodes, elements and their nominal parameter values.
// Mutable while it is built; compile it into a Study to evaluate it.
#include <cstddef>
#include <limits>
#include <string>
#include <vector>

namespace lotwise {

enum class ElementKind {
  resistor,
  capacitor,
  inductor,
  voltage_source,
  current_source,
  vcvs,  ///< voltage-controlled voltage source
  vccs,  ///< voltage-controlled current source
  ccvs,  ///< current-controlled voltage source
  cccs,  ///< current-controlled current source
  opamp,
};

/// How an op-amp's open-loop gain is modelled.
enum class OpAmpModel {
  ideal,        ///< nullor: infinite gain, inputs at equal voltage
  finite_gain,  ///< flat open-loop gain A0
  single_pole,  ///< A(s) = A0 / (1 + s A0 / (2 pi GBW))
};

/// Nominal data of one op-amp part.
struct OpAmpSpec {
  OpAmpModel model = OpAmpModel::ideal;
  double open_loop_gain = 1e5;  ///< A0, V/V (finite_gain, single_pole)
  double gain_bandwidth = 1e6;  ///< GBW, Hz (single_pole)
  double offset = 0.0;          ///< input offset voltage, V, in series with the + input
  double bias_plus = 0.0;       ///< bias current into the + input, A
  double bias_minus = 0.0;      ///< bias current into the - input, A

  /// Output limits. The output reaches supply_high - headroom_high and
  /// supply_low + headroom_low; output_high / output_low, when finite, state a level
  /// directly instead (give one form per side). Infinite supplies, the default, leave
  /// that side unlimited, so the op-amp never saturates there.
  double supply_high = std::numeric_limits<double>::infinity();   ///< V
  double supply_low = -std::numeric_limits<double>::infinity();   ///< V
  double headroom_high = 0.0;  ///< how far below supply_high the output can go, V (>= 0)
  double headroom_low = 0.0;   ///< how far above supply_low the output can go, V (>= 0)
  double output_high = std::numeric_limits<double>::infinity();   ///< explicit high level, V
  double output_low = -std::numeric_limits<double>::infinity();   ///< explicit low level, V
};

/// One parameter of the circuit that a variation may move. A passive part's or a
/// source's value is named after the element ("R1", "VREF"); op-amp parameters are
/// "U1.open_loop_gain", "U1.gain_bandwidth", "U1.offset", "U1.bias_plus", "U1.bias_minus",
/// and, for a limited output, "U1.supply_high" with "U1.headroom_high" or "U1.output_high"
/// (likewise for the low side).
struct Parameter {
  std::string name;
  double nominal = 0.0;
  std::string unit;
  bool positive = false;    ///< only values > 0 are physical (R, C, L, A0, GBW)
  std::size_t element = 0;  ///< index of the element it belongs to
};

struct Element {
  std::string name;
  ElementKind kind = ElementKind::resistor;
  /// Node names, in the order of the add_* call that made it.
  std::vector<std::string> nodes;
  /// Controlled-source control nodes (vcvs, vccs) or empty.
  std::vector<std::string> control_nodes;
  /// Name of the voltage source whose current controls a ccvs / cccs.
  std::string control_source;
  OpAmpModel model = OpAmpModel::ideal;
  /// Indices into Circuit::parameters(); the primary value first.
  std::vector<std::size_t> parameters;
};

const char* to_string(ElementKind kind);
const char* to_string(OpAmpModel model);

class Circuit {
 public:
  /// `ground` is the name of the reference node.
  explicit Circuit(std::string ground = "gnd");

  const std::string& ground() const { return ground_; }

  void add_resistor(const std::string& name, const std::string& a, const std::string& b,
                    double ohms);
  void add_capacitor(const std::string& name, const std::string& a, const std::string& b,
                     double farads);
  void add_inductor(const std::string& name, const std::string& a, const std::string& b,
                    double henries);
  /// V(plus) - V(minus) = volts.
  void add_voltage_source(const std::string& name, const std::string& plus,
                          const std::string& minus, double volts);
  /// `amps` flows out of node `from`, through the source, into node `to`.
  void add_current_source(const std::string& name, const std::string& from,
                          const std::string& to, double amps);
  /// V(plus) - V(minus) = gain * (V(control_plus) - V(control_minus)).
  void add_vcvs(const std::string& name, const std::string& plus, const std::string& minus,
                const std::string& control_plus, const std::string& control_minus, double gain);
  /// gm * (V(control_plus) - V(control_minus)) flows from `from` through the source to `to`.
  void add_vccs(const std::string& name, const std::string& from, const std::string& to,
                const std::string& control_plus, const std::string& control_minus,
                double transconductance);
  /// V(plus) - V(minus) = r * I(control_source), the current through that voltage source
  /// from its plus node to its minus node.
  void add_ccvs(const std::string& name, const std::string& plus, const std::string& minus,
                const std::string& control_source, double transresistance);
  /// gain * I(control_source) flows from `from` through the source to `to`.
  void add_cccs(const std::string& name, const std::string& from, const std::string& to,
                const std::string& control_source, double gain);
  /// An op-amp; its output is driven against ground.
  void add_opamp(const std::string& name, const std::string& plus, const std::string& minus,
                 const std::string& output, const OpAmpSpec& spec);

  const std::vector<Element>& elements() const { return elements_; }
  const std::vector<Parameter>& parameters() const { return parameters_; }
  /// Node names in order of first use, ground excluded.
  const std::vector<std::string>& nodes() const { return nodes_; }

  /// Index of the element called `name`, or npos.
  std::size_t find_element(const std::string& name) const;
  /// Index of the parameter called `name`, or npos.
  std::size_t find_parameter(const std::string& name) const;
  /// True if `name` is ground or a node some element uses.
  bool has_node(const std::string& name) const;

  /// Changes a parameter's nominal value, with the same checks as when it was added.
  void set_nominal(const std::string& parameter, double value);

  static constexpr std::size_t npos = static_cast<std::size_t>(-1);

 private:
  Element& add_element(const std::string& name, ElementKind kind,
                       std::vector<std::string> nodes);
  void add_parameter(Element& element, const std::string& suffix, double value,
                     const std::string& unit);
  void use_node(const std::string& node, const std::string& element);

  std::string ground_;
  std::vector<Element> elements_;
  std::vector<Parameter> parameters_;
  std::vector<std::string> nodes_;
};

}  // namespace lotwise
