// Output limits: parameters, saturation in linear analyses (at nominal an error, per
// sample a counted, failing outcome), and the checks that keep trip points honest.
#include <cmath>
#include <limits>
#include <string>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Catch::Contains;
using Kind = MeasurementKind;

namespace {

// Non-inverting amplifier, gain 1 + R2/R1, with `amp`'s limits and VIN at `vin`.
Circuit amplifier(double r1, double r2, const OpAmpSpec& amp, double vin) {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", vin);
  c.add_opamp("U1", "in", "m", "out", amp);
  c.add_resistor("R1", "m", "gnd", r1);
  c.add_resistor("R2", "out", "m", r2);
  return c;
}

// A finite-gain op-amp with no output limits.
OpAmpSpec finite_gain_free() {
  OpAmpSpec s;
  s.model = OpAmpModel::finite_gain;
  s.open_loop_gain = 1e5;
  return s;
}

OpAmpSpec rails(double supply, double headroom, OpAmpModel model = OpAmpModel::ideal) {
  OpAmpSpec s;
  s.model = model;
  s.supply_high = supply;
  s.supply_low = -supply;
  s.headroom_high = s.headroom_low = headroom;
  return s;
}

}  // namespace

TEST_CASE("an op-amp without limits keeps its five parameters", "[fast][limits]") {
  const Circuit c = amplifier(1e3, 9e3, OpAmpSpec{}, 0.1);
  CHECK(c.parameters().size() == 1 + 5 + 2);
  const Circuit d = amplifier(1e3, 9e3, rails(15.0, 1.0), 0.1);
  CHECK(d.parameters().size() == 1 + 9 + 2);
  CHECK(d.find_parameter("U1.supply_low") != Circuit::npos);
  CHECK(d.find_parameter("U1.headroom_low") != Circuit::npos);
}

TEST_CASE("bad output limits are design errors", "[fast][limits]") {
  Circuit c;
  OpAmpSpec both;
  both.output_high = 5.0;
  both.supply_high = 5.0;
  CHECK_THROWS_WITH(c.add_opamp("U1", "a", "b", "c", both), Contains("either output_high"));
  OpAmpSpec crossed = limited(5.0, 1.0);
  CHECK_THROWS_WITH(c.add_opamp("U2", "a", "b", "c", crossed), Contains("not above the low limit"));
  OpAmpSpec negative = rails(5.0, -0.1);
  CHECK_THROWS_WITH(c.add_opamp("U3", "a", "b", "c", negative),
                    Contains("headroom_high must be >= 0"));
}

TEST_CASE("a linear gain from an op-amp with no negative feedback: ideal model, singular",
          "[fast][limits]") {
  // An ideal op-amp with no feedback has nothing that sets its output: a clear error
  // naming it, never a number.
  Circuit c = comparator(10e3, 10e3, 5.0, limited(0.0, 5.0));
  CHECK_THROWS_AS(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})}), CircuitError);
  CHECK_THROWS_WITH(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})}),
                    Contains("singular") && Contains("nothing fixes node 'out'") &&
                        Contains("no negative feedback"));
}

TEST_CASE("a linear gain from an op-amp with no negative feedback: finite gain, saturated",
          "[fast][limits]") {
  // The finite-gain model solves, but its output sits at A0 (VIN - 2.5 V) = -250 kV:
  // far beyond its 0..5 V range. The study refuses it at nominal.
  Circuit c = comparator(10e3, 10e3, 5.0, limited(0.0, 5.0, OpAmpModel::finite_gain, 1e5));
  CHECK_THROWS_AS(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})}), CircuitError);
  CHECK_THROWS_WITH(make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"}),
                                   measure("v", Kind::node_voltage, {}, {"ref"})}),
                    Contains("'U1' is saturated") && Contains("'g', 'v'") &&
                        Contains("trip-point kinds"));
  // Without limits the same finite-gain circuit is a (linear) amplifier with gain A0.
  Circuit open = comparator(10e3, 10e3, 5.0, finite_gain_free());
  const Study s = make_study(open, {measure("g", Kind::gain, {"VIN"}, {"out"})});
  CHECK_THAT(nominal_value(s, "g"), close_rel(1e5, 1e-12));
}

TEST_CASE("an amplifier that saturates at nominal is refused", "[fast][limits]") {
  // Gain 10 of 1.3 V is 13 V, beyond a +-12 V supply less 1 V headroom.
  CHECK_THROWS_WITH(
      make_study(amplifier(1e3, 9e3, rails(12.0, 1.0), 1.3),
                 {measure("out", Kind::node_voltage, {}, {"out"})}),
      Contains("'U1' is saturated") && Contains("13 V") && Contains("-11 V to 11 V"));
  // At 1.0 V in, 10 V out: within range, evaluated as before.
  const Study s = make_study(amplifier(1e3, 9e3, rails(12.0, 1.0), 1.0),
                             {measure("out", Kind::node_voltage, {}, {"out"}),
                              measure("g", Kind::gain, {"VIN"}, {"out"}, 1e3)});
  CHECK_THAT(nominal_value(s, "out"), close_rel(10.0, 1e-14));
}

TEST_CASE("per sample, saturation withholds linear values and is counted", "[fast][limits]") {
  // 10 V out of a 12 V supply with 1 V headroom; the supplies spread +-20 % (uniform), so
  // a build saturates when supply_high - 1 V < 10 V, i.e. supply_high < 11 V.
  Variation supply;
  supply.targets = {"U1.supply_high"};
  supply.distribution = Distribution::uniform;
  supply.tolerance = 0.2;
  Spec out_spec;
  out_spec.measurement = "out";
  out_spec.min = 9.9;
  out_spec.max = 10.1;
  const Study s = make_study(amplifier(1e3, 9e3, rails(12.0, 1.0), 1.0),
                             {measure("out", Kind::node_voltage, {}, {"out"})}, {supply},
                             {out_spec});
  std::vector<double> theta = s.nominal_parameters();
  std::vector<double> values;
  theta[s.design().circuit.find_parameter("U1.supply_high")] = 10.5;
  CHECK(s.evaluate(theta, values) == SampleStatus::saturated);
  CHECK(std::isnan(values[0]));
  theta[s.design().circuit.find_parameter("U1.supply_high")] = 11.5;
  CHECK(s.evaluate(theta, values) == SampleStatus::ok);

  RunOptions o;
  o.samples = 4000;
  o.seed = 11;
  o.threads = 1;
  const YieldResult r = s.run(o);
  // P(supply_high < 11 V) for U(9.6, 14.4) is 1.4 / 4.8 = 0.2917; a 4000-sample count
  // lies within +-5 sigma (0.036) of it.
  const double p = static_cast<double>(r.saturated) / static_cast<double>(r.samples);
  CHECK_THAT(p, close_abs(1.4 / 4.8, 0.036));
  CHECK(r.singular == 0);
  CHECK(r.specs[0].saturated == r.saturated);  // every saturated build fails the spec
  CHECK(r.passed == r.samples - r.saturated);   // and every other one passes
  CHECK(r.measurements[0].saturated == r.saturated);
  CHECK(r.measurements[0].stats.count() == r.samples - r.saturated);
  CHECK(r.measurements[0].stats.max() <= 10.0 + 1e-12);
  // The summary and the report show the counts.
  const std::string table = summary_table(s, r);
  const std::string count = std::to_string(r.saturated);
  CHECK_THAT(table, Contains("Saturated builds (counted as failing): " + count));
  CHECK_THAT(table, Contains("(" + count + " failed saturated)"));
  const std::string json = report_json(s, r);
  CHECK_THAT(json, Contains("\"saturated\": " + count));

  // A small-signal measurement alone still checks the operating point.
  const Study ac = make_study(amplifier(1e3, 9e3, rails(12.0, 1.0), 1.0),
                              {measure("g", Kind::gain, {"VIN"}, {"out"}, 1e3)});
  theta = ac.nominal_parameters();
  CHECK(ac.evaluate(theta, values) == SampleStatus::ok);
  CHECK_THAT(values[0], close_rel(10.0, 1e-14));
  theta[ac.design().circuit.find_parameter("U1.supply_high")] = 10.5;
  CHECK(ac.evaluate(theta, values) == SampleStatus::saturated);
  CHECK(std::isnan(values[0]));
}

TEST_CASE("trip measurements need a limited op-amp and a reachable source", "[fast][limits]") {
  Circuit c = comparator(10e3, 10e3, 5.0, OpAmpSpec{});
  CHECK_THROWS_WITH(make_study(c, thresholds("VIN", "U1")),
                    Contains("needs output limits on both sides"));
  Circuit d = comparator(10e3, 10e3, 5.0, limited(0.0, 5.0));
  CHECK_THROWS_WITH(make_study(d, thresholds("VIN", "R1")), Contains("is not an op-amp"));
  Circuit elsewhere = d;
  elsewhere.add_voltage_source("VX", "x", "gnd", 1.0);
  elsewhere.add_resistor("RX", "x", "gnd", 1e3);
  CHECK_THROWS_WITH(make_study(elsewhere, thresholds("VX", "U1")),
                    Contains("'VX' does not reach the inputs"));
  Measurement no_amp = trip("t", Kind::rising_threshold, "VIN", "");
  CHECK_THROWS_WITH(make_study(d, {no_amp}), Contains("names its deciding op-amp"));
  Measurement with_output = trip("t", Kind::rising_threshold, "VIN", "U1", {"out"});
  CHECK_THROWS_WITH(make_study(d, {with_output}), Contains("takes no output"));
  Measurement freq = trip("t", Kind::hysteresis, "VIN", "U1");
  freq.frequency = 1e3;
  CHECK_THROWS_WITH(make_study(d, {freq}), Contains("takes no frequency"));
  Measurement gain_with_amp = measure("g", Kind::gain, {"VIN"}, {"out"});
  gain_with_amp.opamp = "U1";
  CHECK_THROWS_WITH(make_study(d, {gain_with_amp}), Contains("only the trip-point kinds"));
}

TEST_CASE("a trip point that depends on another comparator's state is refused",
          "[fast][limits]") {
  // U2's output feeds U1's - input: U1's threshold depends on whether U2 is high or low.
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_voltage_source("VREF", "ref", "gnd", 1.0);
  c.add_opamp("U2", "in", "ref", "o2", limited(0.0, 5.0));
  c.add_resistor("RA", "o2", "m", 10e3);
  c.add_resistor("RB", "m", "gnd", 10e3);
  c.add_opamp("U1", "in", "m", "o1", limited(0.0, 5.0));
  CHECK_THROWS_WITH(make_study(c, {trip("a", Kind::rising_threshold, "VIN", "U1"),
                                   trip("b", Kind::rising_threshold, "VIN", "U2")}),
                    Contains("depend on the output of op-amp 'U2'"));
}

TEST_CASE("a linear op-amp beyond its limits at a trip point marks it saturated",
          "[fast][limits]") {
  // A reference buffer U2 that can only reach 2 V, asked to follow 2.5 V.
  Circuit d;
  d.add_voltage_source("VIN", "in", "gnd", 0.0);
  d.add_voltage_source("VS", "vs", "gnd", 5.0);
  d.add_resistor("RA", "vs", "div", 10e3);
  d.add_resistor("RB", "div", "gnd", 10e3);
  OpAmpSpec buffer = limited(0.0, 3.0);
  d.add_opamp("U2", "div", "ref", "ref", buffer);
  d.add_resistor("R1", "in", "p", 10e3);
  d.add_resistor("R2", "out", "p", 100e3);
  d.add_opamp("U1", "p", "ref", "out", limited(-10.0, 10.0));
  Variation v;
  v.targets = {"U2.output_high"};
  v.distribution = Distribution::uniform;
  v.tolerance = 1.0;  // 2 V .. 4 V: below 2.5 V the buffer saturates
  v.relative = false;
  const Study s = make_study(d, thresholds("VIN", "U1"), {v});
  std::vector<double> theta = s.nominal_parameters();
  std::vector<double> values;
  CHECK(s.evaluate(theta, values) == SampleStatus::ok);
  theta[d.find_parameter("U2.output_high")] = 2.2;
  CHECK(s.evaluate(theta, values) == SampleStatus::saturated);
  CHECK(std::isnan(values[0]));
  // At nominal the same fault is an error that names the trip point.
  Circuit e = d;
  e.set_nominal("U2.output_high", 2.0);
  CHECK_THROWS_WITH(make_study(e, thresholds("VIN", "U1")),
                    Contains("'U2' is saturated") && Contains("at a trip point of 'rise'"));
}

TEST_CASE("a draw whose output range closes up is an invalid value", "[fast][limits]") {
  const Study s = make_study(comparator(10e3, 10e3, 5.0, limited(0.0, 5.0)),
                             thresholds("VIN", "U1"));
  std::vector<double> theta = s.nominal_parameters();
  std::vector<double> values;
  theta[s.design().circuit.find_parameter("U1.output_high")] = -0.5;
  CHECK(s.evaluate(theta, values) == SampleStatus::invalid_value);
}
