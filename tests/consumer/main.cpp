// Builds a difference amplifier with 1 % resistors in code, runs 2000 builds twice and
// checks that the yield is a proper fraction and the same both times.
#include <cstdio>
#include <exception>

#include <lotwise/lotwise.hpp>

namespace {

lotwise::Design difference_amplifier() {
  lotwise::Circuit c;
  c.add_voltage_source("VP", "in_p", "gnd", 0.0);
  c.add_voltage_source("VN", "in_n", "gnd", 0.0);
  c.add_opamp("U1", "p", "n", "out", lotwise::OpAmpSpec{});
  c.add_resistor("R1", "in_n", "n", 10e3);
  c.add_resistor("R2", "n", "out", 100e3);
  c.add_resistor("R3", "in_p", "p", 10e3);
  c.add_resistor("R4", "p", "gnd", 100e3);

  lotwise::Design d{"consumer difference amplifier", c, {}, {}, {}, {}};
  lotwise::Variation resistors;
  resistors.targets = {"R*"};
  resistors.tolerance = 0.01;  // 1 % at 3 sigma
  d.variations.push_back(resistors);
  d.measurements.push_back(
      {"gain", lotwise::MeasurementKind::differential_gain, {"VP", "VN"}, {"out"}, 0.0});
  lotwise::Spec gain;
  gain.measurement = "gain";
  gain.min = 9.95;  // +-0.5 %: about three builds in four pass
  gain.max = 10.05;
  d.specs.push_back(gain);
  return d;
}

}  // namespace

int main() {
  try {
    const lotwise::Study study(difference_amplifier());
    lotwise::RunOptions options;
    options.samples = 2000;
    options.seed = 2024;
    const lotwise::YieldResult first = study.run(options);
    const lotwise::YieldResult second = study.run(options);
    std::printf("lotwise %s: yield %.4f (%llu of %llu)\n", lotwise::version(), first.yield,
                static_cast<unsigned long long>(first.passed),
                static_cast<unsigned long long>(first.samples));
    if (first.samples != 2000) {
      std::fprintf(stderr, "expected 2000 samples, got %llu\n",
                   static_cast<unsigned long long>(first.samples));
      return 1;
    }
    if (!(first.yield > 0.0 && first.yield < 1.0)) {
      std::fprintf(stderr, "the yield %g is not strictly between 0 and 1\n", first.yield);
      return 1;
    }
    if (first.passed != second.passed || first.yield != second.yield) {
      std::fprintf(stderr, "two runs with the same seed differ: %g and %g\n", first.yield,
                   second.yield);
      return 1;
    }
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "error: %s\n", e.what());
    return 1;
  }
}
