#include "lotwise/circuit.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <utility>

#include "lotwise/error.hpp"

namespace lotwise {

const char* to_string(ElementKind kind) {
  switch (kind) {
    case ElementKind::resistor: return "resistor";
    case ElementKind::capacitor: return "capacitor";
    case ElementKind::inductor: return "inductor";
    case ElementKind::voltage_source: return "voltage_source";
    case ElementKind::current_source: return "current_source";
    case ElementKind::vcvs: return "vcvs";
    case ElementKind::vccs: return "vccs";
    case ElementKind::ccvs: return "ccvs";
    case ElementKind::cccs: return "cccs";
    case ElementKind::opamp: return "opamp";
  }
  return "?";
}

const char* to_string(OpAmpModel model) {
  switch (model) {
    case OpAmpModel::ideal: return "ideal";
    case OpAmpModel::finite_gain: return "finite_gain";
    case OpAmpModel::single_pole: return "single_pole";
  }
  return "?";
}

namespace {

// Which values a parameter may take; checked when a value is set and for every draw.
bool must_be_positive(const std::string& unit) {
  return unit == "ohm" || unit == "F" || unit == "H" || unit == "V/V" || unit == "Hz";
}

void check_value(const std::string& parameter, const std::string& unit, double value) {
  if (!std::isfinite(value)) {
    throw DesignError("parameter '" + parameter + "': value must be a finite number");
  }
  if (must_be_positive(unit) && !(value > 0.0)) {
    // %g, not std::to_string: fixed six decimals would show -1 pF as "-0.000000".
    char shown[32];
    std::snprintf(shown, sizeof shown, "%g", value);
    throw DesignError("parameter '" + parameter + "': value must be greater than zero (got " +
                      shown + " " + unit + ")");
  }
}

}  // namespace

Circuit::Circuit(std::string ground) : ground_(std::move(ground)) {
  if (ground_.empty()) throw DesignError("the ground node needs a name");
}

Element& Circuit::add_element(const std::string& name, ElementKind kind,
                              std::vector<std::string> nodes) {
  if (name.empty()) throw DesignError(std::string("a ") + to_string(kind) + " needs a name");
  if (name.find('.') != std::string::npos || name.find('*') != std::string::npos) {
    throw DesignError("element name '" + name + "' may not contain '.' or '*'");
  }
  if (find_element(name) != npos) {
    throw DesignError("element name '" + name + "' is used twice");
  }
  for (const auto& node : nodes) {
    if (node.empty()) throw DesignError("element '" + name + "': a node name is empty");
  }
  if (kind != ElementKind::opamp && nodes.size() == 2 && nodes[0] == nodes[1]) {
    throw DesignError("element '" + name + "' (" + to_string(kind) + ") connects node '" +
                      nodes[0] + "' to itself");
  }
  for (const auto& node : nodes) use_node(node, name);
  Element element;
  element.name = name;
  element.kind = kind;
  element.nodes = std::move(nodes);
  elements_.push_back(std::move(element));
  return elements_.back();
}

void Circuit::use_node(const std::string& node, const std::string& /*element*/) {
  if (node == ground_) return;
  if (std::find(nodes_.begin(), nodes_.end(), node) == nodes_.end()) nodes_.push_back(node);
}

void Circuit::add_parameter(Element& element, const std::string& suffix, double value,
                            const std::string& unit) {
  Parameter parameter;
  parameter.name = suffix.empty() ? element.name : element.name + "." + suffix;
  check_value(parameter.name, unit, value);
  parameter.nominal = value;
  parameter.unit = unit;
  parameter.positive = must_be_positive(unit);
  parameter.element = elements_.size() - 1;
  element.parameters.push_back(parameters_.size());
  parameters_.push_back(std::move(parameter));
}

void Circuit::add_resistor(const std::string& name, const std::string& a, const std::string& b,
                           double ohms) {
  check_value(name, "ohm", ohms);
  add_parameter(add_element(name, ElementKind::resistor, {a, b}), "", ohms, "ohm");
}

void Circuit::add_capacitor(const std::string& name, const std::string& a, const std::string& b,
                            double farads) {
  check_value(name, "F", farads);
  add_parameter(add_element(name, ElementKind::capacitor, {a, b}), "", farads, "F");
}

void Circuit::add_inductor(const std::string& name, const std::string& a, const std::string& b,
                           double henries) {
  check_value(name, "H", henries);
  add_parameter(add_element(name, ElementKind::inductor, {a, b}), "", henries, "H");
}

void Circuit::add_voltage_source(const std::string& name, const std::string& plus,
                                 const std::string& minus, double volts) {
  check_value(name, "V", volts);
  add_parameter(add_element(name, ElementKind::voltage_source, {plus, minus}), "", volts, "V");
}

void Circuit::add_current_source(const std::string& name, const std::string& from,
                                 const std::string& to, double amps) {
  check_value(name, "A", amps);
  add_parameter(add_element(name, ElementKind::current_source, {from, to}), "", amps, "A");
}

void Circuit::add_vcvs(const std::string& name, const std::string& plus, const std::string& minus,
                       const std::string& control_plus, const std::string& control_minus,
                       double gain) {
  check_value(name, "", gain);
  Element& e = add_element(name, ElementKind::vcvs, {plus, minus});
  e.control_nodes = {control_plus, control_minus};
  for (const auto& node : e.control_nodes) {
    if (node.empty()) throw DesignError("element '" + name + "': a control node name is empty");
    use_node(node, name);
  }
  add_parameter(e, "", gain, "");
}

void Circuit::add_vccs(const std::string& name, const std::string& from, const std::string& to,
                       const std::string& control_plus, const std::string& control_minus,
                       double transconductance) {
  check_value(name, "S", transconductance);
  Element& e = add_element(name, ElementKind::vccs, {from, to});
  e.control_nodes = {control_plus, control_minus};
  for (const auto& node : e.control_nodes) {
    if (node.empty()) throw DesignError("element '" + name + "': a control node name is empty");
    use_node(node, name);
  }
  add_parameter(e, "", transconductance, "S");
}

void Circuit::add_ccvs(const std::string& name, const std::string& plus, const std::string& minus,
                       const std::string& control_source, double transresistance) {
  check_value(name, "V/A", transresistance);
  Element& e = add_element(name, ElementKind::ccvs, {plus, minus});
  e.control_source = control_source;
  add_parameter(e, "", transresistance, "V/A");
}

void Circuit::add_cccs(const std::string& name, const std::string& from, const std::string& to,
                       const std::string& control_source, double gain) {
  check_value(name, "", gain);
  Element& e = add_element(name, ElementKind::cccs, {from, to});
  e.control_source = control_source;
  add_parameter(e, "", gain, "A/A");
}

void Circuit::add_opamp(const std::string& name, const std::string& plus,
                        const std::string& minus, const std::string& output,
                        const OpAmpSpec& spec) {
  if (output == ground_) {
    throw DesignError("op-amp '" + name + "': its output is tied to ground ('" + ground_ + "')");
  }
  check_value(name + ".open_loop_gain", "V/V", spec.open_loop_gain);
  check_value(name + ".gain_bandwidth", "Hz", spec.gain_bandwidth);
  check_value(name + ".offset", "V", spec.offset);
  check_value(name + ".bias_plus", "A", spec.bias_plus);
  check_value(name + ".bias_minus", "A", spec.bias_minus);
  // Each side of the output swing: an explicit level, a supply less headroom, or none.
  const auto side = [&](double supply, double headroom, double level, const char* which,
                        double unlimited) {
    const std::string s = std::string(which);
    if (std::isnan(supply) || std::isnan(level) || !std::isfinite(headroom)) {
      throw DesignError("op-amp '" + name + "': supply_" + s + ", headroom_" + s +
                        " and output_" + s + " must be numbers (headroom finite)");
    }
    if (std::isfinite(level) && std::isfinite(supply)) {
      throw DesignError("op-amp '" + name + "': give either output_" + s + " or supply_" + s +
                        " (with headroom_" + s + "), not both");
    }
    if (supply == -unlimited || level == -unlimited) {
      throw DesignError("op-amp '" + name + "': supply_" + s + " / output_" + s +
                        " is infinite on the wrong side");
    }
    if (headroom < 0.0) {
      throw DesignError("op-amp '" + name + "': headroom_" + s + " must be >= 0");
    }
    // Headroom without a supply (say from a grade, on an unlimited op-amp) has no effect.
    if (std::isfinite(level)) return level;
    return std::isfinite(supply) ? supply - (unlimited > 0 ? headroom : -headroom) : unlimited;
  };
  constexpr double inf = std::numeric_limits<double>::infinity();
  const double high = side(spec.supply_high, spec.headroom_high, spec.output_high, "high", inf);
  const double low = side(spec.supply_low, spec.headroom_low, spec.output_low, "low", -inf);
  if (!(high > low)) {
    char shown[80];
    std::snprintf(shown, sizeof shown, "%g V is not above the low limit %g V", high, low);
    throw DesignError("op-amp '" + name + "': its high output limit " + shown);
  }
  Element& e = add_element(name, ElementKind::opamp, {plus, minus, output});
  e.model = spec.model;
  // The primary parameter of an op-amp is its open-loop gain.
  add_parameter(e, "open_loop_gain", spec.open_loop_gain, "V/V");
  add_parameter(e, "gain_bandwidth", spec.gain_bandwidth, "Hz");
  add_parameter(e, "offset", spec.offset, "V");
  add_parameter(e, "bias_plus", spec.bias_plus, "A");
  add_parameter(e, "bias_minus", spec.bias_minus, "A");
  // Limit parameters exist only for a limited side, so unlimited op-amps keep five.
  if (std::isfinite(spec.output_high)) {
    add_parameter(e, "output_high", spec.output_high, "V");
  } else if (std::isfinite(spec.supply_high)) {
    add_parameter(e, "supply_high", spec.supply_high, "V");
    add_parameter(e, "headroom_high", spec.headroom_high, "V");
  }
  if (std::isfinite(spec.output_low)) {
    add_parameter(e, "output_low", spec.output_low, "V");
  } else if (std::isfinite(spec.supply_low)) {
    add_parameter(e, "supply_low", spec.supply_low, "V");
    add_parameter(e, "headroom_low", spec.headroom_low, "V");
  }
}

std::size_t Circuit::find_element(const std::string& name) const {
  for (std::size_t i = 0; i < elements_.size(); ++i) {
    if (elements_[i].name == name) return i;
  }
  return npos;
}

std::size_t Circuit::find_parameter(const std::string& name) const {
  for (std::size_t i = 0; i < parameters_.size(); ++i) {
    if (parameters_[i].name == name) return i;
  }
  return npos;
}

bool Circuit::has_node(const std::string& name) const {
  return name == ground_ || std::find(nodes_.begin(), nodes_.end(), name) != nodes_.end();
}

void Circuit::set_nominal(const std::string& parameter, double value) {
  const std::size_t i = find_parameter(parameter);
  if (i == npos) throw DesignError("no parameter called '" + parameter + "'");
  check_value(parameter, parameters_[i].unit, value);
  parameters_[i].nominal = value;
}

}  // namespace lotwise
