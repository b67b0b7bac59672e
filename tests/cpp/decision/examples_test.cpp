// The decision and filter examples of docs/examples/ load, compile, give the nominal
// values their comments derive, and run to a yield.
#include <cmath>
#include <string>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

std::string example(const std::string& name) {
  return std::string(LOTWISE_EXAMPLES_DIR) + "/" + name;
}

double value_of(const Circuit& c, const std::string& parameter) {
  return c.parameters()[c.find_parameter(parameter)].nominal;
}

// Runs a short yield analysis and checks its bookkeeping.
YieldResult short_run(const Study& s) {
  RunOptions o;
  o.samples = 2000;
  o.seed = 5;
  const YieldResult r = s.run(o);
  CHECK(r.samples == 2000);
  CHECK(r.singular == 0);
  CHECK(r.invalid_values == 0);
  CHECK(r.saturated == 0);
  CHECK(r.yield > 0.0);
  CHECK(r.specs.size() == s.design().specs.size());
  for (const auto& m : r.measurements) CHECK(m.stats.count() == 2000);
  return r;
}

}  // namespace

TEST_CASE("example: over-temperature trip", "[examples]") {
  const Study s(load_design(example("over_temperature_trip.toml")));
  const Circuit& c = s.design().circuit;
  // Derived: VSENSE drives the - input through RS (bias current Ib drawn from it), the +
  // input sits on RA/RB/RH with Ib drawn from it; the output held low at L = 0.1 V leaves
  // it where V+ - V- = L/A0. The trip is VSENSE falling onto that point.
  const double ra = value_of(c, "RA"), rb = value_of(c, "RB"), rh = value_of(c, "RH");
  const double rs = value_of(c, "RS"), ib = value_of(c, "U1.bias_minus");
  const double a0 = value_of(c, "U1.open_loop_gain");
  const auto plus_at = [&](double level) {
    return (5.0 / ra + level / rh - ib) / (1.0 / ra + 1.0 / rb + 1.0 / rh);
  };
  const double low = 0.1, high = 4.9;
  const auto source_at = [&](double level) { return plus_at(level) - level / a0 + rs * ib; };
  CHECK_THAT(nominal_value(s, "trip_point"), close_rel(source_at(low), 1e-12));
  CHECK_THAT(nominal_value(s, "reset_point"), close_rel(source_at(high), 1e-12));
  CHECK_THAT(nominal_value(s, "trip_level"), close_rel(high, 1e-15));
  // 85 °C lies within the trip window the comments give (2.4175 V .. 2.5514 V).
  CHECK(nominal_value(s, "trip_point") > 2.4175);
  CHECK(nominal_value(s, "trip_point") < 2.5514);
  const YieldResult r = short_run(s);
  CHECK(r.yield < 1.0);  // 5 % reference resistors cost yield: the point of the example
}

TEST_CASE("example: sump pump level switch", "[examples]") {
  const Study s(load_design(example("sump_pump_level_switch.toml")));
  const Circuit& c = s.design().circuit;
  // Derived: V+ = (s/R1 + L/R2 - Ib) / (1/R1 + 1/R2), V- = 5 RB/(RA + RB) - Ib (RA || RB);
  // the output held at L leaves it where V+ - V- = L/A0.
  const double r1 = value_of(c, "R1"), r2 = value_of(c, "R2");
  const double ra = value_of(c, "RA"), rb = value_of(c, "RB");
  const double ib = value_of(c, "U1.bias_plus"), a0 = value_of(c, "U1.open_loop_gain");
  const double minus = 5.0 * rb / (ra + rb) - ib * ra * rb / (ra + rb);
  const auto source_at = [&](double level) {
    const double plus = minus + level / a0;
    return r1 * (plus * (1.0 / r1 + 1.0 / r2) - level / r2 + ib);
  };
  const double low = 0.1, high = 12.0 - 1.5;
  CHECK_THAT(nominal_value(s, "start_level"), close_rel(source_at(low), 1e-12));
  CHECK_THAT(nominal_value(s, "stop_level"), close_rel(source_at(high), 1e-12));
  CHECK_THAT(nominal_value(s, "hysteresis"), close_rel(source_at(low) - source_at(high), 1e-12));
  CHECK_THAT(nominal_value(s, "drive_on"), close_rel(high, 1e-15));
  short_run(s);
}

TEST_CASE("example: Sallen-Key anti-aliasing low-pass", "[examples]") {
  const Study s(load_design(example("antialias_lowpass.toml")));
  // Derived for an ideal op-amp (see frequency_test.cpp); the 1 MHz single-pole op-amp
  // moves the -3 dB point of this 1 kHz section by far less than 0.1 %.
  const double r = 10e3, c1 = 22e-9, c2 = 10e-9;
  const double root = std::sqrt(r * r * c1 * c2);
  const double f0 = 1.0 / (2.0 * 3.14159265358979323846 * root);
  const double q = root / (c2 * 2.0 * r);
  const double b = 2.0 - 1.0 / (q * q);
  const double y = 0.5 * (b + std::sqrt(b * b + 4.0));
  CHECK_THAT(nominal_value(s, "bandwidth"), close_rel(f0 * std::sqrt(y), 1e-3));
  CHECK_THAT(nominal_value(s, "passband_error"), close_abs(0.0, 2e-3));
  short_run(s);
}
