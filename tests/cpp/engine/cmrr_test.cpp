// Difference-amplifier common-mode rejection against the exact resistor-mismatch expression.
#include <cmath>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

// source: /work/shared/references.md (Sedra & Smith ch. 2; Pallas-Areny & Webster, IEEE TIM
// 40(4), 1991), ideal op-amp, R1 inverting input, R2 feedback, R3 non-inverting input,
// R4 to reference:
//   A_cm = (R1 R4 - R2 R3)/(R1 (R3 + R4)),  A_d = 1/2 [R2/R1 + (R4/(R3 + R4))(1 + R2/R1)].
struct DifferenceGains {
  double ad;
  double acm;
};
DifferenceGains exact_gains(double r1, double r2, double r3, double r4) {
  const double acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4));
  const double ad = 0.5 * (r2 / r1 + (r4 / (r3 + r4)) * (1.0 + r2 / r1));
  return {ad, acm};
}

Study rejection_study(double r1, double r2, double r3, double r4) {
  return make_study(difference_amplifier(r1, r2, r3, r4, ideal_opamp(), 2.5, 2.5),
                    {measure("ad", Kind::differential_gain, {"VP", "VM"}, {"out"}),
                     measure("acm", Kind::common_mode_gain, {"VP", "VM"}, {"out"}),
                     measure("cmrr", Kind::cmrr, {"VP", "VM"}, {"out"})});
}

}  // namespace

TEST_CASE("CMRR with one mismatched resistor", "[fast][cmrr]") {
  const double r = 10e3, g = 10.0;
  // One resistor at a time moved by +0.1 %, then by -0.5 %.
  for (int which = 0; which < 4; ++which) {
    for (double shift : {1.001, 0.995}) {
      double rs[4] = {r, g * r, r, g * r};
      rs[which] *= shift;
      CAPTURE(which, shift);
      const Study s = rejection_study(rs[0], rs[1], rs[2], rs[3]);
      const DifferenceGains want = exact_gains(rs[0], rs[1], rs[2], rs[3]);
      CHECK_THAT(nominal_value(s, "ad"), close_rel(want.ad, 1e-11));
      // A_cm is a difference of near-equal products; compare against its own size.
      CHECK_THAT(nominal_value(s, "acm"), close_abs(want.acm, 1e-9 * std::abs(want.acm)));
      CHECK_THAT(nominal_value(s, "cmrr"),
                 close_abs(20.0 * std::log10(std::abs(want.ad / want.acm)), 1e-7));
    }
  }
}

TEST_CASE("worst-corner CMRR of a gain-100 stage with 1 % resistors", "[fast][cmrr]") {
  const double t = 0.01;
  const double r1 = 1e3 * (1.0 + t), r2 = 100e3 * (1.0 - t);
  const double r3 = 1e3 * (1.0 - t), r4 = 100e3 * (1.0 + t);
  const Study s = rejection_study(r1, r2, r3, r4);
  const double cmrr = std::pow(10.0, nominal_value(s, "cmrr") / 20.0);
  // source: /work/shared/references.md [computed, exact expression at the worst corner]:
  // G = 100, t = 1 % -> CMRR 2524.75 (68.04 dB), A_cm = 0.03883
  CHECK_THAT(cmrr, close_rel(2524.75, 4e-6));
  CHECK_THAT(nominal_value(s, "cmrr"), close_abs(68.04, 0.005));
  CHECK_THAT(nominal_value(s, "acm"), close_abs(0.03883, 5e-6));
  // source: Pallas-Areny & Webster, IEEE TIM 40(4), 1991: worst case ~ (1 + G)/(4t)
  CHECK_THAT(cmrr, close_rel((1.0 + 100.0) / (4.0 * t), 0.01));
  // source: Sedra & Smith, difference-amplifier exercise (2k/200k, 1 %): CMRR ~ 68 dB
  CHECK_THAT(nominal_value(rejection_study(2e3 * 1.01, 200e3 * 0.99, 2e3 * 0.99, 200e3 * 1.01),
                           "cmrr"),
             close_abs(68.0, 0.1));
}

TEST_CASE("worst-corner CMRR of a gain-4 stage with 0.1 % resistors", "[fast][cmrr]") {
  const double t = 0.001;
  const Study s = rejection_study(10e3 * (1.0 + t), 40e3 * (1.0 - t), 10e3 * (1.0 - t),
                                  40e3 * (1.0 + t));
  // source: /work/shared/references.md [computed]: G = 4, t = 0.1 % -> 1250.0 (61.94 dB)
  CHECK_THAT(std::pow(10.0, nominal_value(s, "cmrr") / 20.0), close_rel(1250.0, 1e-5));
  CHECK_THAT(nominal_value(s, "cmrr"), close_abs(61.94, 0.005));
}

TEST_CASE("CMRR of a differential output pair", "[fast][cmrr]") {
  // The output named as a pair (out, ref) with the reference resistor returned to a
  // source: the reference level must not change the gains.
  const double r1 = 10e3, r2 = 20e3, r3 = 10e3, r4 = 20e3 * 1.002;
  Circuit c;
  c.add_voltage_source("VP", "inp", "gnd", 2.5);
  c.add_voltage_source("VM", "inm", "gnd", 2.5);
  c.add_voltage_source("VREF", "ref", "gnd", 1.2);
  c.add_resistor("R1", "inm", "m", r1);
  c.add_resistor("R2", "m", "out", r2);
  c.add_resistor("R3", "inp", "p", r3);
  c.add_resistor("R4", "p", "ref", r4);
  c.add_opamp("U1", "p", "m", "out", ideal_opamp());
  const Study s = make_study(c, {measure("ad", Kind::differential_gain, {"VP", "VM"},
                                         {"out", "ref"}),
                                 measure("acm", Kind::common_mode_gain, {"VP", "VM"},
                                         {"out", "ref"})});
  const DifferenceGains want = exact_gains(r1, r2, r3, r4);
  // source: as above (Sedra & Smith ch. 2), the reference node only shifts the output
  CHECK_THAT(nominal_value(s, "ad"), close_rel(want.ad, 1e-11));
  CHECK_THAT(nominal_value(s, "acm"), close_abs(want.acm, 1e-9 * std::abs(want.acm)));
}
