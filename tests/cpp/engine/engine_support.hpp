#pragma once
// Circuit and study builders shared by the engine tests.
#include <string>
#include <utility>
#include <vector>

#include "test_support.hpp"

namespace lotwise::testing {

inline OpAmpSpec ideal_opamp() { return OpAmpSpec{}; }

inline OpAmpSpec finite_gain_opamp(double a0) {
  OpAmpSpec s;
  s.model = OpAmpModel::finite_gain;
  s.open_loop_gain = a0;
  return s;
}

inline OpAmpSpec single_pole_opamp(double a0, double gbw) {
  OpAmpSpec s;
  s.model = OpAmpModel::single_pole;
  s.open_loop_gain = a0;
  s.gain_bandwidth = gbw;
  return s;
}

/// Non-inverting amplifier: VIN -> RP -> + input; R1 from - input to ground, R2 from
/// the output to the - input. Output node "out".
inline Circuit non_inverting(double r1, double r2, const OpAmpSpec& spec, double vin = 0.0,
                             double rp = 0.0) {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", vin);
  if (rp > 0.0) {
    c.add_resistor("RP", "in", "p", rp);
    c.add_opamp("U1", "p", "m", "out", spec);
  } else {
    c.add_opamp("U1", "in", "m", "out", spec);
  }
  c.add_resistor("R1", "m", "gnd", r1);
  c.add_resistor("R2", "out", "m", r2);
  return c;
}

/// Inverting amplifier: VIN -> R1 -> - input, R2 from the output to the - input,
/// + input to ground through RP (directly when rp == 0). Output node "out".
inline Circuit inverting(double r1, double r2, const OpAmpSpec& spec, double vin = 0.0,
                         double rp = 0.0) {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", vin);
  c.add_resistor("R1", "in", "m", r1);
  c.add_resistor("R2", "out", "m", r2);
  if (rp > 0.0) {
    c.add_resistor("RP", "p", "gnd", rp);
    c.add_opamp("U1", "p", "m", "out", spec);
  } else {
    c.add_opamp("U1", "gnd", "m", "out", spec);
  }
  return c;
}

/// Difference amplifier: R1 from VM's node to the - input, R2 feedback, R3 from VP's
/// node to the + input, R4 from the + input to ground. Inputs "VP", "VM"; output "out".
inline Circuit difference_amplifier(double r1, double r2, double r3, double r4,
                                    const OpAmpSpec& spec = OpAmpSpec{}, double vp = 0.0,
                                    double vm = 0.0) {
  Circuit c;
  c.add_voltage_source("VP", "inp", "gnd", vp);
  c.add_voltage_source("VM", "inm", "gnd", vm);
  c.add_resistor("R1", "inm", "m", r1);
  c.add_resistor("R2", "m", "out", r2);
  c.add_resistor("R3", "inp", "p", r3);
  c.add_resistor("R4", "p", "gnd", r4);
  c.add_opamp("U1", "p", "m", "out", spec);
  return c;
}

}  // namespace lotwise::testing
