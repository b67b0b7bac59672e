#pragma once
// Random op-amp networks and parameter vectors, for the engine tests that compare two
// ways of solving the same network.
#include <algorithm>
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "test_support.hpp"

namespace lotwise::testing {

// A random network of resistors, capacitors, voltage sources and op-amps of every model,
// with a spanning tree of resistors to ground so every node has a DC path.
inline Circuit random_circuit(std::mt19937_64& rng) {
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  auto pick = [&](int lo, int hi) { return std::uniform_int_distribution<int>(lo, hi)(rng); };
  auto log_uniform = [&](double lo, double hi) { return lo * std::pow(hi / lo, unit(rng)); };
  auto name = [](int n) { return n < 0 ? std::string("gnd") : "n" + std::to_string(n); };
  Circuit c;
  const int nodes = pick(4, 14);
  const int amps = pick(1, std::min(3, nodes - 2));
  c.add_voltage_source("VS", name(0), "gnd", 1.0);
  for (int i = 1; i < nodes; ++i) {
    c.add_resistor("RT" + std::to_string(i), name(i), name(pick(-1, i - 1)), log_uniform(1e3, 1e5));
  }
  for (int k = 0; k < nodes; ++k) {
    const int a = pick(-1, nodes - 1);
    int b = pick(-1, nodes - 1);
    if (a == b) b = a == -1 ? 0 : -1;
    if (unit(rng) < 0.5) {
      c.add_resistor("RX" + std::to_string(k), name(a), name(b), log_uniform(1e3, 1e5));
    } else {
      c.add_capacitor("C" + std::to_string(k), name(a), name(b), log_uniform(1e-10, 1e-7));
    }
  }
  for (int k = 0; k < amps; ++k) {
    const int out = 1 + k;
    int plus = pick(-1, nodes - 1), minus = pick(-1, nodes - 1);
    if (minus == plus) minus = plus == -1 ? out : -1;
    OpAmpSpec s;
    const int model = pick(0, 2);
    s.model = model == 0 ? OpAmpModel::ideal
                         : model == 1 ? OpAmpModel::finite_gain : OpAmpModel::single_pole;
    s.open_loop_gain = log_uniform(1e2, 1e6);
    s.gain_bandwidth = log_uniform(1e5, 1e7);
    s.offset = 1e-3 * (unit(rng) - 0.5);
    c.add_opamp("U" + std::to_string(k), name(plus), name(minus), name(out), s);
  }
  return c;
}

// theta with every positive parameter moved by a log-uniform factor in [1/f, f].
inline std::vector<double> moved(const Circuit& c, std::mt19937_64& rng, double f) {
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::vector<double> theta = nominal(c);
  for (std::size_t i = 0; i < theta.size(); ++i) {
    if (c.parameters()[i].positive) theta[i] *= std::pow(f, unit(rng));
  }
  return theta;
}

}  // namespace lotwise::testing
