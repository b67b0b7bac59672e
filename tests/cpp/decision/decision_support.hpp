#pragma once
// Circuit and study builders shared by the decision-circuit tests.
#include <limits>
#include <string>
#include <utility>
#include <vector>

#include "test_support.hpp"

namespace lotwise::testing {

/// A trip-point measurement of op-amp `opamp` driven by `source`.
inline Measurement trip(std::string name, MeasurementKind kind, std::string source,
                        std::string opamp, std::vector<std::string> output = {}) {
  Measurement m;
  m.name = std::move(name);
  m.kind = kind;
  m.inputs = {std::move(source)};
  m.output = std::move(output);
  m.opamp = std::move(opamp);
  return m;
}

/// The four threshold measurements of op-amp `opamp` driven by `source`.
inline std::vector<Measurement> thresholds(const std::string& source, const std::string& opamp) {
  return {trip("rise", MeasurementKind::rising_threshold, source, opamp),
          trip("fall", MeasurementKind::falling_threshold, source, opamp),
          trip("hyst", MeasurementKind::hysteresis, source, opamp),
          trip("centre", MeasurementKind::threshold_centre, source, opamp)};
}

/// An op-amp whose output reaches exactly `low` and `high`.
inline OpAmpSpec limited(double low, double high, OpAmpModel model = OpAmpModel::ideal,
                         double a0 = 1e5) {
  OpAmpSpec s;
  s.model = model;
  s.open_loop_gain = a0;
  s.output_low = low;
  s.output_high = high;
  return s;
}

/// Inverting Schmitt trigger: VIN drives the - input; the + input sits on a divider R1
/// (to VREF's node, or ground when vref == 0 and no source is wanted) and R2 (from the
/// output). Output node "out".
inline Circuit inverting_schmitt(double r1, double r2, const OpAmpSpec& amp, double vref = 0.0,
                                 double vin = 0.0) {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", vin);
  c.add_voltage_source("VREF", "ref", "gnd", vref);
  c.add_resistor("R1", "p", "ref", r1);
  c.add_resistor("R2", "out", "p", r2);
  c.add_opamp("U1", "p", "in", "out", amp);
  return c;
}

/// Non-inverting Schmitt trigger: VIN through R1 to the + input, R2 from the output to
/// the + input, the - input at VREF. Output node "out".
inline Circuit non_inverting_schmitt(double r1, double r2, const OpAmpSpec& amp,
                                     double vref = 0.0, double vin = 0.0) {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", vin);
  c.add_voltage_source("VREF", "ref", "gnd", vref);
  c.add_resistor("R1", "in", "p", r1);
  c.add_resistor("R2", "out", "p", r2);
  c.add_opamp("U1", "p", "ref", "out", amp);
  return c;
}

/// Open-loop comparator: VIN on the + input (or the - input when `inverting`), the other
/// input on a divider RA (from VS) / RB (to ground). Output node "out".
inline Circuit comparator(double ra, double rb, double vs, const OpAmpSpec& amp,
                          bool inverting = false) {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_voltage_source("VS", "vs", "gnd", vs);
  c.add_resistor("RA", "vs", "ref", ra);
  c.add_resistor("RB", "ref", "gnd", rb);
  if (inverting) c.add_opamp("U1", "ref", "in", "out", amp);
  else c.add_opamp("U1", "in", "ref", "out", amp);
  c.add_resistor("RL", "out", "gnd", 10e3);
  return c;
}

}  // namespace lotwise::testing
