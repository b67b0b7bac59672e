// Op-amp stages through lotwise::Network and lotwise::Study against textbook closed forms.
#include <cmath>
#include <complex>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

TEST_CASE("ideal inverting and non-inverting gains", "[fast][closed_form]") {
  const double r1 = 4.99e3;
  const double r2 = 49.9e3;
  {
    const Circuit c = non_inverting(r1, r2, ideal_opamp(), 0.25);
    const Network net(c);
    // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (non-inverting: 1 + R2/R1)
    CHECK_THAT(net.transfer(nominal(c), "VIN", "out", "gnd", 0.0).real(),
               close_rel(1.0 + r2 / r1, 1e-12));
    // The operating point scales the 0.25 V input by the same gain.
    const auto v = net.operating_point(nominal(c));
    const auto& nodes = c.nodes();
    for (std::size_t i = 0; i < nodes.size(); ++i) {
      if (nodes[i] == "out") CHECK_THAT(v[i], close_rel(0.25 * (1.0 + r2 / r1), 1e-12));
    }
    const Study s = make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})});
    CHECK_THAT(nominal_value(s, "g"), close_rel(1.0 + r2 / r1, 1e-12));
  }
  {
    const Circuit c = inverting(r1, r2, ideal_opamp());
    const Network net(c);
    // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (inverting: -R2/R1)
    CHECK_THAT(net.transfer(nominal(c), "VIN", "out", "gnd", 0.0).real(),
               close_rel(-r2 / r1, 1e-12));
    const Study s = make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})});
    CHECK_THAT(nominal_value(s, "g"), close_rel(-r2 / r1, 1e-12));
  }
}

TEST_CASE("matched difference amplifier gain is R2/R1", "[fast][closed_form]") {
  const double r1 = 10e3;
  const double r2 = 33e3;
  const Study s = make_study(difference_amplifier(r1, r2, r1, r2),
                             {measure("ad", Kind::differential_gain, {"VP", "VM"}, {"out"}),
                              measure("acm", Kind::common_mode_gain, {"VP", "VM"}, {"out"}),
                              measure("cmrr", Kind::cmrr, {"VP", "VM"}, {"out"})});
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (difference amplifier, matched
  // ratios R4/R3 = R2/R1: v_o = (R2/R1)(v+ - v-), no common-mode response)
  CHECK_THAT(nominal_value(s, "ad"), close_rel(r2 / r1, 1e-12));
  CHECK_THAT(nominal_value(s, "acm"), close_abs(0.0, 1e-13));
  // A perfectly matched network rejects common mode completely.
  CHECK(std::isinf(nominal_value(s, "cmrr")));
}

TEST_CASE("three-op-amp instrumentation amplifier gain", "[fast][closed_form]") {
  const double ra = 2.2e3, rb = 24.9e3, r1 = 10e3, r2 = 47e3;
  Circuit c;
  c.add_voltage_source("VP", "inp", "gnd", 1.0);
  c.add_voltage_source("VM", "inm", "gnd", 1.0);
  c.add_opamp("U1", "inp", "n1", "o1", ideal_opamp());
  c.add_opamp("U2", "inm", "n2", "o2", ideal_opamp());
  c.add_resistor("RB1", "o1", "n1", rb);
  c.add_resistor("RA", "n1", "n2", ra);
  c.add_resistor("RB2", "n2", "o2", rb);
  c.add_resistor("R1", "o2", "m3", r1);
  c.add_resistor("R2", "m3", "out", r2);
  c.add_resistor("R3", "o1", "p3", r1);
  c.add_resistor("R4", "p3", "gnd", r2);
  c.add_opamp("U3", "p3", "m3", "out", ideal_opamp());
  const Study s = make_study(c, {measure("g", Kind::differential_gain, {"VP", "VM"}, {"out"}),
                                 measure("first", Kind::differential_gain, {"VP", "VM"},
                                         {"o1", "o2"})});
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (instrumentation amplifier,
  // G = (1 + 2 RB/RA) R2/R1)
  CHECK_THAT(nominal_value(s, "g"), close_rel((1.0 + 2.0 * rb / ra) * (r2 / r1), 1e-12));
  CHECK_THAT(nominal_value(s, "first"), close_rel(1.0 + 2.0 * rb / ra, 1e-12));
}

TEST_CASE("finite open-loop gain closes at A/(1 + A beta)", "[fast][closed_form]") {
  const double a = 1e5;
  const double r1 = 1e3;
  const double r2 = 99e3;  // ideal gain +100
  const double ideal = 1.0 + r2 / r1;
  {
    const Circuit c = non_inverting(r1, r2, finite_gain_opamp(a));
    const Study s = make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})});
    // source: Sedra & Smith, ch. 2; Franco, Design with Operational Amplifiers, ch. 1:
    // G = (1 + R2/R1)/(1 + (1 + R2/R1)/A)
    CHECK_THAT(nominal_value(s, "g"), close_rel(ideal / (1.0 + ideal / a), 1e-12));
    // source: /work/shared/references.md [computed]: ideal 100 with A = 1e5 -> 99.9001
    CHECK_THAT(nominal_value(s, "g"), close_abs(99.9001, 5e-5));
    // The same through the network's own transfer.
    CHECK_THAT(Network(c).transfer(nominal(c), "VIN", "out", "gnd", 0.0).real(),
               close_rel(ideal / (1.0 + ideal / a), 1e-12));
  }
  {
    const Circuit c = inverting(r1, r2, finite_gain_opamp(a));
    const Study s = make_study(c, {measure("g", Kind::gain, {"VIN"}, {"out"})});
    // source: Sedra & Smith, ch. 2: G = -(R2/R1)/(1 + (1 + R2/R1)/A)
    CHECK_THAT(nominal_value(s, "g"), close_rel(-(r2 / r1) / (1.0 + ideal / a), 1e-12));
  }
  {
    // A low open-loop gain makes the loss large enough that a wrong beta would show.
    const double a_low = 50.0;
    const Circuit c = non_inverting(r1, 9e3, finite_gain_opamp(a_low));
    const double beta = r1 / (r1 + 9e3);
    // source: Sedra & Smith, ch. 2: A_f = A/(1 + A beta)
    CHECK_THAT(Network(c).transfer(nominal(c), "VIN", "out", "gnd", 0.0).real(),
               close_rel(a_low / (1.0 + a_low * beta), 1e-12));
  }
}

namespace {

// Exact -3 dB frequency of a single-pole op-amp loop: f_b (1 + A0 beta), f_b = GBW/A0.
double single_pole_f3db(double a0, double gbw, double beta) {
  return gbw / a0 * (1.0 + a0 * beta);
}

void check_bandwidth(const Circuit& c, double beta, double quoted) {
  const double a0 = 1e5, gbw = 1e6;
  const Study s = make_study(c, {measure("bw", Kind::bandwidth, {"VIN"}, {"out"})});
  const double bw = nominal_value(s, "bw");
  // source: /work/shared/references.md (Sedra & Smith ch. 2; Franco ch. 6), exact
  // single-pole closed-loop value f_3dB = f_b (1 + A0 beta)
  CHECK_THAT(bw, close_rel(single_pole_f3db(a0, gbw, beta), 1e-9));
  // source: /work/shared/references.md [computed]: f_3dB ~ beta f_t; the exact value
  // exceeds it by f_b = 10 Hz.
  CHECK_THAT(bw, close_rel(beta * gbw, 2e-4));
  // source: /work/shared/references.md [computed]: 100 kHz for +10, 90.9 kHz for -10
  // (quoted to three figures)
  CHECK_THAT(bw, close_abs(quoted, 0.05e3 + gbw / a0));
  // |H| at the reported frequency is 1/sqrt(2) of its DC value.
  const Network net(c);
  const double dc = std::abs(net.transfer(nominal(c), "VIN", "out", "gnd", 0.0));
  const double at = std::abs(net.transfer(nominal(c), "VIN", "out", "gnd", bw));
  CHECK_THAT(at / dc, close_rel(1.0 / std::sqrt(2.0), 1e-9));
  // And it is not yet 3 dB down a little below it (the root is the first crossing).
  const double below = std::abs(net.transfer(nominal(c), "VIN", "out", "gnd", 0.9 * bw));
  CHECK(below / dc > 1.0 / std::sqrt(2.0) + 1e-3);
}

}  // namespace

TEST_CASE("single-pole closed-loop bandwidth", "[fast][closed_form]") {
  const OpAmpSpec amp = single_pole_opamp(1e5, 1e6);
  SECTION("non-inverting gain +10") {
    check_bandwidth(non_inverting(1e3, 9e3, amp), 0.1, 100e3);
  }
  SECTION("inverting gain -10") {
    check_bandwidth(inverting(1e3, 10e3, amp), 1.0 / 11.0, 90.9e3);
  }
}

TEST_CASE("single-pole op-amp response against the closed-loop pole", "[fast][closed_form]") {
  const double a0 = 2e5, gbw = 3e6, r1 = 1e3, r2 = 19e3;
  const Circuit c = non_inverting(r1, r2, single_pole_opamp(a0, gbw));
  const Network net(c);
  const double beta = r1 / (r1 + r2);
  const double pi = 3.14159265358979323846;
  for (double f : {10.0, 1e3, 1e5, 1e6, 1e7}) {
    // source: Sedra & Smith, ch. 2: A(s) = A0/(1 + s/w_b), w_b = 2 pi GBW/A0, closed
    // loop A(s)/(1 + A(s) beta)
    const std::complex<double> s(0.0, 2.0 * pi * f);
    const std::complex<double> a = a0 / (1.0 + s * a0 / (2.0 * pi * gbw));
    const std::complex<double> want = a / (1.0 + a * beta);
    const std::complex<double> got = net.transfer(nominal(c), "VIN", "out", "gnd", f);
    CHECK_THAT(got.real(), close_abs(want.real(), 1e-10 * std::abs(want)));
    CHECK_THAT(got.imag(), close_abs(want.imag(), 1e-10 * std::abs(want)));
  }
}
