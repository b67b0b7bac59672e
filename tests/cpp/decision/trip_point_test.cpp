// Trip points of comparators and Schmitt triggers against their textbook formulas.
#include <algorithm>
#include <cmath>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

TEST_CASE("inverting Schmitt trigger, +-11 V output, 10k/1k divider: thresholds +-1 V",
          "[fast][trip]") {
  // source: common practice (thresholds +-V R1/(R1+R2) of an inverting Schmitt trigger
  // with a symmetric output +-V; /work/shared/references.md "[standard]"):
  // 11 V * 1k / (1k + 10k) = 1 V.
  auto ms = thresholds("VIN", "U1");
  ms.push_back(trip("high", Kind::output_high, "VIN", "U1"));
  ms.push_back(trip("low", Kind::output_low, "VIN", "U1"));
  const Study s = make_study(inverting_schmitt(1e3, 10e3, limited(-11.0, 11.0)), ms);
  // Inverting: the output is high below the window, so a rising input trips at +1 V.
  CHECK_THAT(nominal_value(s, "rise"), close_abs(1.0, 1e-12));
  CHECK_THAT(nominal_value(s, "fall"), close_abs(-1.0, 1e-12));
  CHECK_THAT(nominal_value(s, "hyst"), close_abs(2.0, 1e-12));
  CHECK_THAT(nominal_value(s, "centre"), close_abs(0.0, 1e-12));
  CHECK(nominal_value(s, "high") == 11.0);
  CHECK(nominal_value(s, "low") == -11.0);
}

TEST_CASE("inverting Schmitt trigger with finite gain: the output leaves a limit at e = L/A0",
          "[fast][trip]") {
  // Derived: with the output held at L the + input sits at L R1/(R1+R2), and a finite
  // gain A0 holds L while A0 (V+ - V-) is beyond L, so s = L (R1/(R1+R2) - 1/A0).
  const double a0 = 2e3;
  const Study s = make_study(
      inverting_schmitt(1e3, 10e3, limited(-11.0, 11.0, OpAmpModel::finite_gain, a0)),
      thresholds("VIN", "U1"));
  CHECK_THAT(nominal_value(s, "rise"), close_rel(11.0 * (1.0 / 11.0 - 1.0 / a0), 1e-12));
  CHECK_THAT(nominal_value(s, "fall"), close_rel(-11.0 * (1.0 / 11.0 - 1.0 / a0), 1e-12));
}

TEST_CASE("inverting Schmitt trigger with a reference offset", "[fast][trip]") {
  // Derived by superposition: V+ = (VREF R2 + L R1) / (R1 + R2).
  const double r1 = 4.7e3, r2 = 33e3, vref = 1.2, hi = 4.8, lo = 0.15;
  const Study s = make_study(inverting_schmitt(r1, r2, limited(lo, hi), vref),
                             thresholds("VIN", "U1"));
  const auto plus_at = [&](double level) { return (vref * r2 + level * r1) / (r1 + r2); };
  CHECK_THAT(nominal_value(s, "rise"), close_rel(plus_at(hi), 1e-12));
  CHECK_THAT(nominal_value(s, "fall"), close_rel(plus_at(lo), 1e-12));
  CHECK_THAT(nominal_value(s, "hyst"), close_rel((hi - lo) * r1 / (r1 + r2), 1e-12));
}

TEST_CASE("non-inverting Schmitt trigger: V_TH = -(R1/R2) V_OL, V_TL = -(R1/R2) V_OH",
          "[fast][trip]") {
  // source: Sedra & Smith, Microelectronic Circuits, the bistable (Schmitt trigger)
  // circuits of the chapter on signal generators (from memory): with the input through
  // R1 to the + input and R2 from the output, V_TH = -L- R1/R2 and V_TL = -L+ R1/R2.
  // Asymmetric levels show which one belongs to which threshold.
  const double r1 = 10e3, r2 = 47e3, hi = 12.5, lo = -9.0;
  const Study s = make_study(non_inverting_schmitt(r1, r2, limited(lo, hi)),
                             thresholds("VIN", "U1"));
  CHECK_THAT(nominal_value(s, "rise"), close_rel(-lo * r1 / r2, 1e-12));
  CHECK_THAT(nominal_value(s, "fall"), close_rel(-hi * r1 / r2, 1e-12));
  CHECK_THAT(nominal_value(s, "hyst"), close_rel((hi - lo) * r1 / r2, 1e-12));
}

TEST_CASE("non-inverting Schmitt trigger with a reference offset", "[fast][trip]") {
  // source: Franco, Design with Operational Amplifiers and Analog Integrated Circuits,
  // the chapter on comparators and Schmitt triggers (from memory): a reference VREF on
  // the - input shifts both thresholds to VREF (1 + R1/R2) - L R1/R2.
  const double r1 = 10e3, r2 = 64.9e3, vref = 2.89, hi = 10.5, lo = 0.1;
  const Study s = make_study(non_inverting_schmitt(r1, r2, limited(lo, hi), vref),
                             thresholds("VIN", "U1"));
  const auto at = [&](double level) { return vref * (1.0 + r1 / r2) - level * r1 / r2; };
  CHECK_THAT(nominal_value(s, "rise"), close_rel(at(lo), 1e-12));
  CHECK_THAT(nominal_value(s, "fall"), close_rel(at(hi), 1e-12));
  CHECK_THAT(nominal_value(s, "centre"), close_rel(0.5 * (at(lo) + at(hi)), 1e-12));
}

TEST_CASE("a comparator's threshold shifts by exactly its input offset", "[fast][trip]") {
  // source: common practice (the input offset voltage is a source in series with an
  // input: the output switches where V+ + Vos = V-).
  for (const bool inverting : {false, true}) {
    INFO("inverting " << inverting);
    for (const double vos : {3e-3, -1.7e-3}) {
      OpAmpSpec clean = limited(0.0, 5.0);
      OpAmpSpec offset = clean;
      offset.offset = vos;
      const Study s0 = make_study(comparator(10e3, 10e3, 5.0, clean, inverting),
                                  thresholds("VIN", "U1"));
      const Study s1 = make_study(comparator(10e3, 10e3, 5.0, offset, inverting),
                                  thresholds("VIN", "U1"));
      CHECK_THAT(nominal_value(s0, "rise"), close_abs(2.5, 1e-15));
      // On the + input the offset adds to the input, so the input trips Vos earlier; on
      // the - input it adds to the reference.
      const double shift = inverting ? vos : -vos;
      CHECK_THAT(nominal_value(s1, "rise") - nominal_value(s0, "rise"), close_abs(shift, 1e-15));
      CHECK_THAT(nominal_value(s1, "fall") - nominal_value(s0, "fall"), close_abs(shift, 1e-15));
      CHECK(nominal_value(s1, "hyst") == 0.0);  // an ideal comparator has no hysteresis
    }
  }
}

TEST_CASE("an open-loop finite-gain comparator shows its linear range as negative hysteresis",
          "[fast][trip]") {
  // Derived: the output leaves the low limit where A0 e = L-, the high limit where
  // A0 e = L+; e = VIN - 2.5 V, so hysteresis = -(L+ - L-) / A0.
  const double a0 = 5e4;
  const Study s = make_study(
      comparator(10e3, 10e3, 5.0, limited(0.2, 4.7, OpAmpModel::finite_gain, a0)),
      thresholds("VIN", "U1"));
  CHECK_THAT(nominal_value(s, "rise"), close_rel(2.5 + 0.2 / a0, 1e-14));
  CHECK_THAT(nominal_value(s, "fall"), close_rel(2.5 + 4.7 / a0, 1e-14));
  CHECK_THAT(nominal_value(s, "hyst"), close_rel(-4.5 / a0, 1e-9));
}

TEST_CASE("supply, headroom and explicit output levels set the limits", "[fast][trip]") {
  OpAmpSpec amp;
  amp.supply_high = 12.0;
  amp.headroom_high = 1.5;
  amp.supply_low = 0.0;
  amp.headroom_low = 0.05;
  // The output drives an LED through RS into RLED: output_high is read at the LED node.
  Circuit c = comparator(10e3, 10e3, 5.0, amp);
  c.add_resistor("RS", "out", "led", 1e3);
  c.add_resistor("RLED", "led", "gnd", 3e3);
  const Study s = make_study(c, {trip("high", Kind::output_high, "VIN", "U1"),
                                 trip("low", Kind::output_low, "VIN", "U1"),
                                 trip("led_high", Kind::output_high, "VIN", "U1", {"led"})});
  CHECK_THAT(nominal_value(s, "high"), close_rel(10.5, 1e-15));
  CHECK_THAT(nominal_value(s, "low"), close_rel(0.05, 1e-15));
  CHECK_THAT(nominal_value(s, "led_high"), close_rel(10.5 * 3.0 / 4.0, 1e-14));
  // The limits are parameters that variations can reach.
  const auto names = s.parameter_names();
  for (const char* p : {"U1.supply_high", "U1.headroom_high", "U1.supply_low", "U1.headroom_low"}) {
    CHECK(std::find(names.begin(), names.end(), p) != names.end());
  }
  std::vector<double> theta = s.nominal_parameters();
  theta[s.design().circuit.find_parameter("U1.supply_high")] = 11.0;
  std::vector<double> values;
  REQUIRE(s.evaluate(theta, values) == SampleStatus::ok);
  CHECK_THAT(values[0], close_rel(9.5, 1e-15));
}

TEST_CASE("window comparator: each op-amp's thresholds, the other held", "[fast][trip]") {
  // Over-voltage U1 (input on +, 3.0 V on -) and under-voltage U2 (input on -, 1.0 V on +),
  // each against its own reference; their outputs are separate.
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 2.0);
  c.add_voltage_source("VHI", "hi", "gnd", 3.0);
  c.add_voltage_source("VLO", "lo", "gnd", 1.0);
  OpAmpSpec amp = limited(0.0, 5.0);
  amp.offset = 1e-3;
  c.add_opamp("U1", "in", "hi", "over", amp);
  c.add_opamp("U2", "lo", "in", "under", amp);
  c.add_resistor("R1", "over", "gnd", 10e3);
  c.add_resistor("R2", "under", "gnd", 10e3);
  const Study s = make_study(c, {trip("over_rise", Kind::rising_threshold, "VIN", "U1"),
                                 trip("under_fall", Kind::falling_threshold, "VIN", "U2"),
                                 trip("under_rise", Kind::rising_threshold, "VIN", "U2"),
                                 trip("over_high", Kind::output_high, "VIN", "U1")});
  CHECK_THAT(nominal_value(s, "over_rise"), close_abs(3.0 - 1e-3, 1e-15));
  CHECK_THAT(nominal_value(s, "under_fall"), close_abs(1.0 + 1e-3, 1e-15));
  CHECK_THAT(nominal_value(s, "under_rise"), close_abs(1.0 + 1e-3, 1e-15));
  CHECK(nominal_value(s, "over_high") == 5.0);
}

TEST_CASE("a Schmitt trigger whose reference comes from a linear buffer", "[fast][trip]") {
  // U2 buffers a divider (5 V, 10k/10k) onto the - input of non-inverting Schmitt U1.
  const OpAmpSpec buffer = limited(-12.0, 12.0, OpAmpModel::finite_gain, 1e5);
  Circuit d;
  d.add_voltage_source("VIN", "in", "gnd", 0.0);
  d.add_voltage_source("VS", "vs", "gnd", 5.0);
  d.add_resistor("RA", "vs", "div", 10e3);
  d.add_resistor("RB", "div", "gnd", 10e3);
  d.add_opamp("U2", "div", "ref", "ref", buffer);
  d.add_resistor("R1", "in", "p", 10e3);
  d.add_resistor("R2", "out", "p", 100e3);
  d.add_opamp("U1", "p", "ref", "out", limited(-10.0, 10.0));
  const Study s = make_study(d, thresholds("VIN", "U1"));
  const double vref = 2.5 / (1.0 + 1.0 / 1e5);  // follower with finite gain
  CHECK_THAT(nominal_value(s, "rise"), close_rel(vref * 1.1 + 10.0 * 0.1, 1e-12));
  CHECK_THAT(nominal_value(s, "fall"), close_rel(vref * 1.1 - 10.0 * 0.1, 1e-12));
}
