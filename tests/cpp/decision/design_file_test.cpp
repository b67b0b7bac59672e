// The design-file keys of output limits, trip points and frequency measurements.
#include <cmath>
#include <string>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Catch::Contains;

namespace {

const std::string schmitt = R"(
title = "inverting Schmitt trigger"

[opamp_grades.rail]
model = "finite_gain"
open_loop_gain = 1e5
supply_high = 12
supply_low = -12
headroom = 1

[parts]
VIN = { type = "voltage_source", value = 0, nodes = ["in", "gnd"] }
R1  = { type = "resistor", value = "1k", nodes = ["p", "gnd"] }
R2  = { type = "resistor", value = "10k", nodes = ["out", "p"] }
U1  = { type = "opamp", grade = "rail", plus = "p", minus = "in", output = "out" }

[measurements.rise]
kind = "rising_threshold"
inputs = "VIN"
opamp = "U1"

[measurements.high]
kind = "output_high"
inputs = "VIN"
opamp = "U1"
output = "out"

[specs]
rise = { min = 0.99, max = 1.01 }
)";

}  // namespace

TEST_CASE("design file: supplies, headroom and trip-point measurements", "[fast][design_file]") {
  const Study s(parse_design(schmitt, "schmitt.toml"));
  // Output reaches 12 - 1 = 11 V; the + input then sits at 1 V, less L/A0 for the gain.
  CHECK_THAT(nominal_value(s, "rise"), close_rel(11.0 * (1.0 / 11.0 - 1.0 / 1e5), 1e-12));
  CHECK(nominal_value(s, "high") == 11.0);
  const Circuit& c = s.design().circuit;
  CHECK(c.find_parameter("U1.supply_high") != Circuit::npos);
  CHECK(c.find_parameter("U1.headroom_low") != Circuit::npos);
}

TEST_CASE("design file: a part's output levels replace its grade's supplies",
          "[fast][design_file]") {
  std::string text = schmitt;
  const std::string part = R"(grade = "rail", plus)";
  text.replace(text.find(part), part.size(),
               R"(grade = "rail", output_high = 5, output_low = -5, plus)");
  const Study s(parse_design(text, "levels.toml"));
  CHECK_THAT(nominal_value(s, "rise"), close_rel(5.0 * (1.0 / 11.0 - 1.0 / 1e5), 1e-12));
  CHECK(s.design().circuit.find_parameter("U1.output_high") != Circuit::npos);
  CHECK(s.design().circuit.find_parameter("U1.supply_high") == Circuit::npos);
}

TEST_CASE("design file: frequency measurements with target and frequency", "[fast][design_file]") {
  const std::string text = R"(
[parts]
VIN = { type = "voltage_source", value = 0, nodes = ["in", "gnd"] }
R   = { type = "resistor", value = "10k", nodes = ["in", "out"] }
C   = { type = "capacitor", value = "10n", nodes = ["out", "gnd"] }

[measurements.err]
kind = "gain_error"
inputs = "VIN"
output = "out"
frequency = "1.5915494309k"
target = 0.5

[measurements.ph]
kind = "phase"
inputs = "VIN"
output = "out"
frequency = "1.5915494309k"
)";
  const Study s(parse_design(text, "rc.toml"));
  // At f = 1/(2 pi R C) the RC low-pass has |H| = 1/sqrt(2) and -45 degrees
  // (source: Sedra & Smith, ch. 1, single-time-constant networks).
  CHECK_THAT(nominal_value(s, "err"), close_rel(std::sqrt(0.5) / 0.5 - 1.0, 1e-9));
  CHECK_THAT(nominal_value(s, "ph"), close_rel(-45.0, 1e-9));
}

TEST_CASE("design file: errors in the new keys name the place", "[fast][design_file]") {
  std::string both = schmitt;
  const std::string grade_line = "headroom = 1\n";
  both.replace(both.find(grade_line), grade_line.size(), "headroom = 1\noutput_high = 5\n");
  CHECK_THROWS_WITH(parse_design(both, "both.toml"),
                    Contains("both.toml:") && Contains("give either output_high or supply_high"));

  std::string negative = schmitt;
  negative.replace(negative.find(grade_line), grade_line.size(), "headroom = -1\n");
  CHECK_THROWS_WITH(parse_design(negative, "neg.toml"), Contains("headroom must be >= 0"));

  std::string no_amp = schmitt;
  const std::string amp_line = "opamp = \"U1\"\n\n[measurements.high]";
  no_amp.replace(no_amp.find(amp_line), amp_line.size(), "\n[measurements.high]");
  CHECK_THROWS_WITH(parse_design(no_amp, "noamp.toml"),
                    Contains("noamp.toml:") && Contains("names its deciding op-amp"));

  std::string no_target = schmitt;
  no_target += "\n[measurements.e]\nkind = \"gain_error\"\ninputs = \"VIN\"\noutput = \"out\"\n";
  CHECK_THROWS_WITH(parse_design(no_target, "t.toml"), Contains("needs the key 'target'"));

  std::string bad_kind = schmitt;
  bad_kind += "\n[measurements.e]\nkind = \"threshold\"\ninputs = \"VIN\"\n";
  CHECK_THROWS_WITH(parse_design(bad_kind, "k.toml"),
                    Contains("unknown measurement kind 'threshold'") &&
                        Contains("rising_threshold") && Contains("phase"));
}
