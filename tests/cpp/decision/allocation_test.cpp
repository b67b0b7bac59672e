// The per-sample path of trip-point and limit-checked studies allocates nothing: global
// operator new and, on glibc, malloc itself (Eigen allocates through malloc) are replaced
// by counting versions, and an Evaluator is run a thousand times.
#include <cmath>
#include <cstddef>
#include <vector>

#include <Eigen/Dense>

#include "decision_support.hpp"
#include "evaluation_allocations.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

TEST_CASE("per-sample evaluation allocates nothing: trip-point study", "[fast][allocation]") {
  // A non-inverting Schmitt trigger whose reference comes from a limited buffer (so the
  // trip states also check a linear op-amp), measured with every trip-point kind.
  OpAmpSpec buffer = limited(-12.0, 12.0, OpAmpModel::finite_gain, 1e5);
  buffer.offset = 1e-3;
  OpAmpSpec decider;
  decider.supply_high = 12.0;
  decider.supply_low = -12.0;
  decider.headroom_high = decider.headroom_low = 1.0;
  decider.offset = 2e-3;
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_voltage_source("VS", "vs", "gnd", 5.0);
  c.add_resistor("RA", "vs", "div", 10e3);
  c.add_resistor("RB", "div", "gnd", 10e3);
  c.add_opamp("U2", "div", "ref", "ref", buffer);
  c.add_resistor("R1", "in", "p", 10e3);
  c.add_resistor("R2", "out", "p", 100e3);
  c.add_opamp("U1", "p", "ref", "out", decider);
  auto ms = thresholds("VIN", "U1");
  ms.push_back(trip("high", Kind::output_high, "VIN", "U1"));
  ms.push_back(trip("low", Kind::output_low, "VIN", "U1"));
  const Study s = make_study(c, ms);
  std::vector<double> sink;
  const AllocationCounts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[0]));
}

TEST_CASE("per-sample evaluation allocates nothing: limits checked, phase, gain error",
          "[fast][allocation]") {
  OpAmpSpec amp;
  amp.model = OpAmpModel::single_pole;
  amp.supply_high = 15.0;
  amp.supply_low = -15.0;
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.5);
  c.add_opamp("U1", "in", "m", "out", amp);
  c.add_resistor("R1", "m", "gnd", 1e3);
  c.add_resistor("R2", "out", "m", 9e3);
  Measurement err = measure("err", Kind::gain_error, {"VIN"}, {"out"}, 1e3);
  err.target = 10.0;
  const Study s = make_study(c, {measure("vout", Kind::node_voltage, {}, {"out"}),
                                 measure("ph", Kind::phase, {"VIN"}, {"out"}, 20e3), err});
  std::vector<double> sink;
  const AllocationCounts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[1]));
}
