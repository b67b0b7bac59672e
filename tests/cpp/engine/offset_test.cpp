// Output and input offset measurements against the closed forms for offset voltage and
// bias currents.
#include <cmath>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

OpAmpSpec with_errors(double vos, double ib_plus, double ib_minus) {
  OpAmpSpec s;  // ideal gain: the offsets alone move the output
  s.offset = vos;
  s.bias_plus = ib_plus;
  s.bias_minus = ib_minus;
  return s;
}

std::vector<Measurement> offset_measurements() {
  return {measure("vout_os", Kind::output_offset, {"VIN"}, {"out"}),
          measure("vin_os", Kind::input_offset, {"VIN"}, {"out"}),
          measure("g", Kind::gain, {"VIN"}, {"out"}),
          measure("vout", Kind::node_voltage, {}, {"out"})};
}

}  // namespace

// The offset is in series with the + input; bias currents flow into the inputs.
// source: Sedra & Smith, Microelectronic Circuits, ch. 2 (DC imperfections: output offset
// Vos (1 + R2/R1); bias current I_B- gives I_B- R2, and I_B+ through RP gives
// -I_B+ RP (1 + R2/R1))
TEST_CASE("non-inverting amplifier offsets", "[fast][offset]") {
  const double r1 = 2e3, r2 = 18e3, rp = 1.5e3, vin = 0.3;
  const double noise_gain = 1.0 + r2 / r1;

  SECTION("offset voltage only") {
    const double vos = 1.7e-3;
    const Study s = make_study(non_inverting(r1, r2, with_errors(vos, 0, 0), vin, rp),
                               offset_measurements());
    CHECK_THAT(nominal_value(s, "vout_os"), close_rel(vos * noise_gain, 1e-12));
    // source: Sedra & Smith ch. 2: referred to the input it is Vos itself
    CHECK_THAT(nominal_value(s, "vin_os"), close_rel(vos, 1e-12));
    // The operating point carries the signal as well: removed by superposition.
    CHECK_THAT(nominal_value(s, "vout"), close_rel((vin + vos) * noise_gain, 1e-12));
  }
  SECTION("bias currents") {
    const double vos = -0.4e-3, ibp = 80e-9, ibm = 120e-9;
    const Study s = make_study(non_inverting(r1, r2, with_errors(vos, ibp, ibm), vin, rp),
                               offset_measurements());
    const double want = vos * noise_gain + ibm * r2 - ibp * rp * noise_gain;
    CHECK_THAT(nominal_value(s, "vout_os"), close_rel(want, 1e-12));
    CHECK_THAT(nominal_value(s, "vin_os"), close_rel(want / noise_gain, 1e-12));
    CHECK_THAT(nominal_value(s, "vout"), close_rel(vin * noise_gain + want, 1e-12));
  }
  SECTION("matched source resistance cancels equal bias currents") {
    // source: Sedra & Smith ch. 2: RP = R1 || R2 cancels the bias-current term
    const double ib = 250e-9;
    const Study s = make_study(
        non_inverting(r1, r2, with_errors(0.0, ib, ib), vin, r1 * r2 / (r1 + r2)),
        offset_measurements());
    CHECK_THAT(nominal_value(s, "vout_os"), close_abs(0.0, 1e-15));
    // A mismatch (offset current) leaves I_os (R1 || R2) at the input.
    const Study t = make_study(
        non_inverting(r1, r2, with_errors(0.0, ib, 1.2 * ib), vin, r1 * r2 / (r1 + r2)),
        offset_measurements());
    CHECK_THAT(nominal_value(t, "vin_os"), close_rel(0.2 * ib * r1 * r2 / (r1 + r2), 1e-9));
  }
}

TEST_CASE("inverting amplifier offsets", "[fast][offset]") {
  const double r1 = 4.7e3, r2 = 47e3, rp = 3.3e3, vin = -0.12;
  const double noise_gain = 1.0 + r2 / r1;
  const double signal_gain = -r2 / r1;
  const double vos = 0.9e-3, ibp = 60e-9, ibm = 45e-9;
  const Study s = make_study(inverting(r1, r2, with_errors(vos, ibp, ibm), vin, rp),
                             offset_measurements());
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2: the + input error
  // (Vos - I_B+ RP) sees the noise gain 1 + R2/R1; I_B- gives I_B- R2
  const double want = (vos - ibp * rp) * noise_gain + ibm * r2;
  CHECK_THAT(nominal_value(s, "g"), close_rel(signal_gain, 1e-12));
  CHECK_THAT(nominal_value(s, "vout_os"), close_rel(want, 1e-12));
  // input_offset is the output offset divided by the signal gain.
  CHECK_THAT(nominal_value(s, "vin_os"), close_rel(want / signal_gain, 1e-12));
  CHECK_THAT(nominal_value(s, "vout"), close_rel(signal_gain * vin + want, 1e-12));

  SECTION("offset voltage alone, referred to the input") {
    const Study t = make_study(inverting(r1, r2, with_errors(vos, 0, 0), vin),
                               offset_measurements());
    CHECK_THAT(nominal_value(t, "vout_os"), close_rel(vos * noise_gain, 1e-12));
    CHECK_THAT(nominal_value(t, "vin_os"), close_rel(-vos * noise_gain / (r2 / r1), 1e-12));
  }
}

TEST_CASE("difference amplifier offset keeps the common-mode level", "[fast][offset]") {
  // Inputs at 2.5 V and 2.4 V with a mismatched R4: output_offset removes only the
  // differential signal, so the common-mode error at 2.45 V remains in it.
  const double r1 = 10e3, r2 = 20e3, r3 = 10e3, r4 = 20e3 * 1.01, vos = 0.5e-3;
  OpAmpSpec amp;
  amp.offset = vos;
  const double vp = 2.5, vm = 2.4;
  const Study s = make_study(difference_amplifier(r1, r2, r3, r4, amp, vp, vm),
                             {measure("os", Kind::output_offset, {"VP", "VM"}, {"out"}),
                              measure("ios", Kind::input_offset, {"VP", "VM"}, {"out"})});
  // source: Sedra & Smith ch. 2 (difference amplifier), with v+ = v- = (vp + vm)/2:
  // v_o = A_cm v_cm + Vos (1 + R2/R1)
  const double acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4));
  const double ad = 0.5 * (r2 / r1 + (r4 / (r3 + r4)) * (1.0 + r2 / r1));
  const double want = acm * 0.5 * (vp + vm) + vos * (1.0 + r2 / r1);
  CHECK_THAT(nominal_value(s, "os"), close_rel(want, 1e-11));
  CHECK_THAT(nominal_value(s, "ios"), close_rel(want / ad, 1e-11));
}
