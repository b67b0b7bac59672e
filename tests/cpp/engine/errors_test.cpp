// Topology faults, singular networks and malformed designs raise errors that name the fault.
#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Catch::Matchers::Contains;
using Kind = MeasurementKind;

TEST_CASE("a floating node is named", "[fast][errors]") {
  Circuit c;
  c.add_voltage_source("V1", "in", "gnd", 1.0);
  c.add_resistor("R1", "in", "gnd", 1e3);
  c.add_capacitor("C1", "in", "island", 1e-9);  // no DC path from 'island' to ground
  CHECK_THROWS_AS(Network(c), CircuitError);
  CHECK_THROWS_WITH(Network(c), Contains("'island'") && Contains("no DC path") &&
                                    Contains("C1"));
  // Study checks the same on construction.
  CHECK_THROWS_AS(make_study(c, {measure("v", Kind::node_voltage, {}, {"in"})}), CircuitError);
  CHECK_THROWS_WITH(make_study(c, {measure("v", Kind::node_voltage, {}, {"in"})}),
                    Contains("island"));

  SECTION("a node behind a current source only") {
    Circuit d;
    d.add_voltage_source("V1", "in", "gnd", 1.0);
    d.add_resistor("R1", "in", "gnd", 1e3);
    d.add_current_source("I1", "in", "hanging", 1e-3);
    CHECK_THROWS_AS(Network(d), CircuitError);
    CHECK_THROWS_WITH(Network(d), Contains("'hanging'") && Contains("I1"));
  }
}

TEST_CASE("a loop of voltage sources names its members", "[fast][errors]") {
  Circuit c;
  c.add_voltage_source("VA", "a", "gnd", 1.0);
  c.add_voltage_source("VB", "a", "gnd", 2.0);
  c.add_resistor("R1", "a", "gnd", 1e3);
  CHECK_THROWS_AS(Network(c), CircuitError);
  CHECK_THROWS_WITH(Network(c), Contains("loop of voltage sources") && Contains("VA") &&
                                    Contains("VB"));

  SECTION("three sources around a triangle, with an inductor") {
    Circuit d;
    d.add_voltage_source("VX", "x", "gnd", 1.0);
    d.add_voltage_source("VY", "y", "x", 1.0);
    d.add_inductor("LZ", "y", "gnd", 1e-3);
    d.add_resistor("R1", "y", "gnd", 1e3);
    CHECK_THROWS_AS(Network(d), CircuitError);
    CHECK_THROWS_WITH(Network(d), Contains("VX") && Contains("VY") && Contains("LZ"));
  }
  SECTION("an op-amp output tied to a source") {
    Circuit d;
    d.add_voltage_source("VO", "out", "gnd", 1.0);
    d.add_resistor("R1", "out", "m", 1e3);
    d.add_resistor("R2", "m", "gnd", 1e3);
    d.add_opamp("U7", "gnd", "m", "out", OpAmpSpec{});
    CHECK_THROWS_AS(Network(d), CircuitError);
    CHECK_THROWS_WITH(Network(d), Contains("VO") && Contains("U7"));
  }
}

TEST_CASE("an ideal op-amp with no feedback is singular at nominal", "[fast][errors]") {
  // The + input is driven, the - input grounded, nothing returns from the output: an
  // ideal op-amp would force V(in) = 0 against the source.
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.1);
  c.add_opamp("U1", "in", "gnd", "out", OpAmpSpec{});
  c.add_resistor("RL", "out", "gnd", 10e3);
  CHECK_NOTHROW(Network(c));  // the topology itself is fine
  CHECK_THROWS_AS(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})}), CircuitError);
  CHECK_THROWS_WITH(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})}),
                    Contains("singular") && Contains("nominal"));
  CHECK_THROWS_WITH(Network(c).operating_point(nominal(c)), Contains("singular"));
  // The same stage with a finite open-loop gain is a valid (open-loop) amplifier.
  Circuit finite;
  finite.add_voltage_source("VIN", "in", "gnd", 0.1);
  OpAmpSpec spec;
  spec.model = OpAmpModel::finite_gain;
  spec.open_loop_gain = 1e3;
  finite.add_opamp("U1", "in", "gnd", "out", spec);
  finite.add_resistor("RL", "out", "gnd", 10e3);
  const Study s = make_study(finite, {measure("g", Kind::gain, {"VIN"}, {"out"})});
  CHECK_THAT(nominal_value(s, "g"), close_rel(1e3, 1e-12));
}

TEST_CASE("a non-positive resistance is refused, naming the resistor", "[fast][errors]") {
  Circuit c;
  CHECK_THROWS_AS(c.add_resistor("R7", "a", "gnd", -5.0), DesignError);
  CHECK_THROWS_WITH(c.add_resistor("R7", "a", "gnd", -5.0), Contains("R7"));
  CHECK_THROWS_WITH(c.add_resistor("R8", "a", "gnd", 0.0), Contains("R8") && Contains("zero"));
  c.add_resistor("R9", "a", "gnd", 1e3);
  CHECK_THROWS_AS(c.set_nominal("R9", 0.0), DesignError);
  CHECK_THROWS_WITH(c.set_nominal("R9", -1.0), Contains("R9"));
  CHECK_THROWS_WITH(c.add_capacitor("C3", "a", "gnd", 0.0), Contains("C3"));
}

TEST_CASE("a spec on a missing measurement is refused", "[fast][errors]") {
  Spec spec;
  spec.measurement = "gian";
  spec.min = 9.0;
  Design d;
  d.circuit = non_inverting(1e3, 9e3, OpAmpSpec{});
  d.measurements = {measure("gain", Kind::gain, {"VIN"}, {"out"})};
  d.specs = {spec};
  CHECK_THROWS_AS(Study(d), DesignError);
  CHECK_THROWS_WITH(Study(d), Contains("'gian'") && Contains("gain"));
}

TEST_CASE("a variation whose target matches nothing is refused", "[fast][errors]") {
  Variation v;
  v.targets = {"RZ*"};
  v.tolerance = 0.01;
  Design d;
  d.circuit = non_inverting(1e3, 9e3, OpAmpSpec{});
  d.measurements = {measure("gain", Kind::gain, {"VIN"}, {"out"})};
  d.variations = {v};
  CHECK_THROWS_AS(Study(d), DesignError);
  CHECK_THROWS_WITH(Study(d), Contains("'RZ*'") && Contains("matches no parameter"));
  // A relative tolerance on a parameter whose nominal is zero cannot spread it.
  v.targets = {"U1.offset"};
  d.variations = {v};
  CHECK_THROWS_WITH(Study(d), Contains("U1.offset") && Contains("absolute"));
}

TEST_CASE("measurements naming missing parts are refused", "[fast][errors]") {
  const Circuit c = non_inverting(1e3, 9e3, OpAmpSpec{});
  CHECK_THROWS_WITH(make_study(c, {measure("g", Kind::gain, {"VX"}, {"out"})}),
                    Contains("'VX'"));
  CHECK_THROWS_WITH(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"nowhere"})}),
                    Contains("'nowhere'"));
  CHECK_THROWS_WITH(make_study(c, {measure("g", Kind::gain, {"R1"}, {"out"})}),
                    Contains("'R1'") && Contains("not an independent"));
  CHECK_THROWS_AS(make_study(c, {measure("c", Kind::cmrr, {"VIN"}, {"out"})}), DesignError);
}

TEST_CASE("keeping the samples of a run too large for memory is refused up front",
          "[fast][errors]") {
  const Study s = make_study(non_inverting(1e3, 9e3, ideal_opamp()),
                            {measure("gain", Kind::gain, {"VIN"}, {"out"})});
  RunOptions o;
  o.samples = std::uint64_t{1} << 60;
  o.keep_samples = true;
  CHECK_THROWS_WITH(s.run(o), Contains("keeping every sample of 1152921504606846976 builds needs about") &&
                                  Contains("GB of memory"));
}
