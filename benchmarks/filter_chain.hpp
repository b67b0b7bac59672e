#pragma once
// Reference study: a chain of unity-gain second-order low-pass stages (two resistors, two
// capacitors and a follower op-amp each, single-pole op-amps), so the network grows by
// three nodes and one branch current per stage. Measured: the gain at three frequencies
// and the phase at one, each an AC factorisation per sample.
#include <string>
#include <vector>

#include <lotwise/lotwise.hpp>

namespace lotwise::bench {

inline Design filter_chain(int stages) {
  Circuit c;
  c.add_voltage_source("VIN", "s0", "gnd", 0.0);
  OpAmpSpec amp;
  amp.model = OpAmpModel::single_pole;
  amp.open_loop_gain = 2e5;
  amp.gain_bandwidth = 10e6;
  for (int k = 1; k <= stages; ++k) {
    const std::string in = "s" + std::to_string(k - 1), out = "s" + std::to_string(k);
    const std::string a = "a" + std::to_string(k), b = "b" + std::to_string(k);
    const std::string n = std::to_string(k);
    // Butterworth section at 10 kHz: R = 11.25 kOhm, C1 = 2 nF, C2 = 1 nF.
    c.add_resistor("RA" + n, in, a, 11.25e3);
    c.add_resistor("RB" + n, a, b, 11.25e3);
    c.add_capacitor("CA" + n, a, out, 2e-9);
    c.add_capacitor("CB" + n, b, "gnd", 1e-9);
    c.add_opamp("U" + n, b, out, out, amp);
  }
  const std::string last = "s" + std::to_string(stages);
  std::vector<Measurement> ms;
  for (const double f : {1e3, 5e3, 20e3}) {
    Measurement m;
    m.name = "gain_" + std::to_string(static_cast<int>(f));
    m.kind = MeasurementKind::gain;
    m.inputs = {"VIN"};
    m.output = {last};
    m.frequency = f;
    ms.push_back(m);
  }
  Measurement phase;
  phase.name = "phase_5k";
  phase.kind = MeasurementKind::phase;
  phase.inputs = {"VIN"};
  phase.output = {last};
  phase.frequency = 5e3;
  ms.push_back(phase);
  std::vector<Variation> vs;
  vs.emplace_back(std::vector<std::string>{"R*"}, Distribution::normal, 0.01);
  vs.emplace_back(std::vector<std::string>{"C*"}, Distribution::normal, 0.05);
  vs.emplace_back(std::vector<std::string>{"U*.gain_bandwidth"}, Distribution::uniform, 0.2);
  Spec spec;
  spec.measurement = "gain_1000";
  spec.min = 0.9;
  spec.max = 1.1;
  return Design("Benchmark: filter chain of " + std::to_string(stages) + " stages", c, vs, ms,
                {spec});
}

}  // namespace lotwise::bench
