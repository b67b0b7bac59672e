// The example of docs/cpp.md, built and run by the tests so the documentation stays true.
#include <iostream>
#include <lotwise/lotwise.hpp>

int main() {
  lotwise::Design d;
  d.title = "Current-loop receiver difference stage";
  auto& c = d.circuit;                               // ground is "gnd"
  c.add_voltage_source("VP", "in_p", "gnd", 0.0);
  c.add_voltage_source("VN", "in_n", "gnd", 0.0);
  c.add_opamp("U1", "p", "n", "out", {lotwise::OpAmpModel::finite_gain, 2e5});
  c.add_resistor("R1", "in_n", "n", 10e3);
  c.add_resistor("R2", "n", "out", 20e3);
  c.add_resistor("R3", "in_p", "p", 10e3);
  c.add_resistor("R4", "p", "gnd", 20e3);
  d.variations.push_back({{"R*"}, lotwise::Distribution::normal, 0.001, true, 3.0});
  d.measurements.push_back({"cmrr", lotwise::MeasurementKind::cmrr, {"VP", "VN"}, {"out"}, 0.0});
  lotwise::Spec cmrr_spec;
  cmrr_spec.measurement = "cmrr";
  cmrr_spec.min = 60.0;
  d.specs.push_back(cmrr_spec);

  const lotwise::Study study(std::move(d));          // throws lotwise::Error on bad input
  lotwise::RunOptions run;
  run.samples = 100000;
  run.seed = 7;
  const lotwise::YieldResult r = study.run(run);
  std::cout << lotwise::summary_table(study, r);
  return r.interval.low >= 0.99 ? 0 : 1;
}
