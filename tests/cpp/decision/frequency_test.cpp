// Frequency measurements: -3 dB bandwidth (root search), phase, gain error.
#include <cmath>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Catch::Contains;
using Kind = MeasurementKind;

namespace {

constexpr double pi = 3.14159265358979323846;

OpAmpSpec single_pole(double a0, double gbw) {
  OpAmpSpec s;
  s.model = OpAmpModel::single_pole;
  s.open_loop_gain = a0;
  s.gain_bandwidth = gbw;
  return s;
}

Measurement gain_error(std::string name, std::vector<std::string> inputs, double target,
                       double frequency = 0.0) {
  Measurement m = measure(std::move(name), Kind::gain_error, std::move(inputs), {"out"}, frequency);
  m.target = target;
  return m;
}

}  // namespace

TEST_CASE("first-order RC low-pass: bandwidth 1/(2 pi R C), -45 degrees there",
          "[fast][frequency]") {
  // source: Sedra & Smith, Microelectronic Circuits, ch. 1 (single-time-constant
  // networks): a low-pass RC has f_3dB = 1/(2 pi R C) and a phase of -45 degrees there.
  const double r = 15e3, cap = 4.7e-9;
  const double fc = 1.0 / (2.0 * pi * r * cap);
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_resistor("R", "in", "rc", r);
  c.add_capacitor("C", "rc", "gnd", cap);
  c.add_opamp("U1", "rc", "out", "out", OpAmpSpec{});  // ideal follower
  const Study s = make_study(c, {measure("bw", Kind::bandwidth, {"VIN"}, {"out"}),
                                 measure("ph", Kind::phase, {"VIN"}, {"out"}, fc),
                                 measure("g", Kind::gain, {"VIN"}, {"out"}, fc)});
  CHECK_THAT(nominal_value(s, "bw"), close_rel(fc, 1e-10));
  CHECK_THAT(nominal_value(s, "ph"), close_rel(-45.0, 1e-12));
  CHECK_THAT(nominal_value(s, "g"), close_rel(std::sqrt(0.5), 1e-12));
}

TEST_CASE("inverting first-order active low-pass: gain -R2/R1, corner 1/(2 pi R2 C)",
          "[fast][frequency]") {
  // source: Franco, Design with Operational Amplifiers and Analog Integrated Circuits,
  // ch. 3, first-order active filters (from memory): H = -(R2/R1) / (1 + j f/f0),
  // f0 = 1/(2 pi R2 C); at f0 the phase is 180 - 45 = 135 degrees.
  const double r1 = 10e3, r2 = 47e3, cap = 3.3e-9;
  const double f0 = 1.0 / (2.0 * pi * r2 * cap);
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_resistor("R1", "in", "m", r1);
  c.add_resistor("R2", "out", "m", r2);
  c.add_capacitor("C", "out", "m", cap);
  c.add_opamp("U1", "gnd", "m", "out", OpAmpSpec{});
  const Study s = make_study(c, {measure("bw", Kind::bandwidth, {"VIN"}, {"out"}),
                                 measure("ph", Kind::phase, {"VIN"}, {"out"}, f0),
                                 measure("dc", Kind::gain, {"VIN"}, {"out"})});
  CHECK_THAT(nominal_value(s, "bw"), close_rel(f0, 1e-10));
  CHECK_THAT(nominal_value(s, "ph"), close_rel(135.0, 1e-12));
  CHECK_THAT(nominal_value(s, "dc"), close_rel(-r2 / r1, 1e-14));
}

TEST_CASE("a follower's bandwidth is the gain-bandwidth product, single-pole model",
          "[fast][frequency]") {
  // source: /work/shared/references.md (Sedra & Smith ch. 2; Franco ch. 6): single pole
  // A(s) = A0 / (1 + s/w_b), f_t = A0 f_b, exact closed-loop f_3dB = f_b (1 + A0 beta).
  // For the follower beta = 1: f_3dB = GBW (1 + 1/A0), which is GBW to 1/A0.
  for (const double a0 : {1e3, 2e5}) {
    const double gbw = 3e6;
    Circuit c;
    c.add_voltage_source("VIN", "in", "gnd", 0.0);
    c.add_opamp("U1", "in", "out", "out", single_pole(a0, gbw));
    const Study s = make_study(c, {measure("bw", Kind::bandwidth, {"VIN"}, {"out"}),
                                   measure("ph", Kind::phase, {"VIN"}, {"out"},
                                           gbw * (1.0 + 1.0 / a0))});
    CHECK_THAT(nominal_value(s, "bw"), close_rel(gbw * (1.0 + 1.0 / a0), 1e-10));
    CHECK_THAT(nominal_value(s, "ph"), close_rel(-45.0, 1e-9));
  }
}

TEST_CASE("non-inverting gain 10, single pole: f_3dB = f_b (1 + A0 beta)", "[fast][frequency]") {
  // source: /work/shared/references.md (f_t = 1 MHz, gain +10 -> 100 kHz; exact
  // f_b (1 + A0 beta) with f_b = GBW / A0 = 10 Hz, beta = 0.1: 100010 Hz).
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_opamp("U1", "in", "m", "out", single_pole(1e5, 1e6));
  c.add_resistor("R1", "m", "gnd", 1e3);
  c.add_resistor("R2", "out", "m", 9e3);
  const Study s = make_study(c, {measure("bw", Kind::bandwidth, {"VIN"}, {"out"})});
  CHECK_THAT(nominal_value(s, "bw"), close_rel(100010.0, 1e-10));
}

TEST_CASE("unity-gain Sallen-Key low-pass: the -3 dB point of a second-order section",
          "[fast][frequency]") {
  // source: Sedra & Smith, Microelectronic Circuits, the chapter on filters (Sallen-Key
  // low-pass, from memory) and derived by nodal analysis: H = 1 / (1 + s C2 (R1 + R2) +
  // s^2 R1 R2 C1 C2), so f0 = 1 / (2 pi sqrt(R1 R2 C1 C2)), Q = sqrt(R1 R2 C1 C2) /
  // (C2 (R1 + R2)); |H|^2 = 1/2 where (f/f0)^2 = y solves y^2 - (2 - 1/Q^2) y - 1 = 0.
  const double r1 = 10e3, r2 = 12e3, c1 = 22e-9, c2 = 10e-9;
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_resistor("R1", "in", "a", r1);
  c.add_resistor("R2", "a", "b", r2);
  c.add_capacitor("C1", "a", "out", c1);
  c.add_capacitor("C2", "b", "gnd", c2);
  c.add_opamp("U1", "b", "out", "out", OpAmpSpec{});
  const Study s = make_study(c, {measure("bw", Kind::bandwidth, {"VIN"}, {"out"})});
  const double root = std::sqrt(r1 * r2 * c1 * c2);
  const double f0 = 1.0 / (2.0 * pi * root);
  const double q = root / (c2 * (r1 + r2));
  const double b = 2.0 - 1.0 / (q * q);
  const double y = 0.5 * (b + std::sqrt(b * b + 4.0));
  CHECK_THAT(nominal_value(s, "bw"), close_rel(f0 * std::sqrt(y), 1e-10));
}

TEST_CASE("gain error against a target", "[fast][frequency]") {
  // source: /work/shared/references.md: ideal gain 100 with A = 1e5 gives 99.9001
  // (G = (1 + R2/R1) / (1 + (1 + R2/R1)/A)), a gain error of 1/(1 + 100/1e5) - 1.
  OpAmpSpec amp;
  amp.model = OpAmpModel::finite_gain;
  amp.open_loop_gain = 1e5;
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_opamp("U1", "in", "m", "out", amp);
  c.add_resistor("R1", "m", "gnd", 1e3);
  c.add_resistor("R2", "out", "m", 99e3);
  const Study s = make_study(c, {gain_error("err", {"VIN"}, 100.0),
                                 gain_error("err_ac", {"VIN"}, 100.0, 1e3),
                                 measure("g", Kind::gain, {"VIN"}, {"out"})});
  CHECK_THAT(nominal_value(s, "g"), close_rel(99.9001, 1e-6));
  CHECK_THAT(nominal_value(s, "err"), close_rel(1.0 / (1.0 + 100.0 / 1e5) - 1.0, 1e-10));
  CHECK_THAT(nominal_value(s, "err_ac"), close_rel(1.0 / (1.0 + 100.0 / 1e5) - 1.0, 1e-10));
  // Signed at DC: an inverting stage measured against a negative target.
  Circuit inv;
  inv.add_voltage_source("VIN", "in", "gnd", 0.0);
  inv.add_resistor("R1", "in", "m", 10e3);
  inv.add_resistor("R2", "out", "m", 20.2e3);
  inv.add_opamp("U1", "gnd", "m", "out", OpAmpSpec{});
  const Study t = make_study(inv, {gain_error("err", {"VIN"}, -2.0)});
  CHECK_THAT(nominal_value(t, "err"), close_rel(0.01, 1e-12));
}

TEST_CASE("differential gain error uses the differential gain", "[fast][frequency]") {
  // Difference amplifier R2/R1 = R4/R3 = 10: differential gain 10 exactly.
  Circuit c;
  c.add_voltage_source("VP", "inp", "gnd", 0.0);
  c.add_voltage_source("VM", "inm", "gnd", 0.0);
  c.add_resistor("R1", "inm", "m", 1e3);
  c.add_resistor("R2", "m", "out", 10e3);
  c.add_resistor("R3", "inp", "p", 1e3);
  c.add_resistor("R4", "p", "gnd", 10e3);
  c.add_opamp("U1", "p", "m", "out", OpAmpSpec{});
  const Study s = make_study(c, {gain_error("err", {"VP", "VM"}, 9.9)});
  CHECK_THAT(nominal_value(s, "err"), close_rel(10.0 / 9.9 - 1.0, 1e-12));
}

TEST_CASE("frequency measurements reject what they cannot mean", "[fast][frequency]") {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_opamp("U1", "in", "out", "out", OpAmpSpec{});
  CHECK_THROWS_WITH(make_study(c, {measure("ph", Kind::phase, {"VIN"}, {"out"})}),
                    Contains("needs a frequency above 0 Hz"));
  CHECK_THROWS_WITH(make_study(c, {gain_error("e", {"VIN"}, 0.0)}),
                    Contains("non-zero target"));
  CHECK_THROWS_WITH(make_study(c, {gain_error("e", {"VIN"}, -1.0, 1e3)}),
                    Contains("target must be positive"));
  Measurement g = measure("g", Kind::gain, {"VIN"}, {"out"});
  g.target = 2.0;
  CHECK_THROWS_WITH(make_study(c, {g}), Contains("only a gain_error measurement takes a target"));
}
