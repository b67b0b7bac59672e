#pragma once
// JCGM 101:2008 section 9.2, the additive model Y = X1 + X2 + X3 + X4, built in lotwise as
// four varied voltage sources in series; the measurement is the voltage at the top.
#include <cmath>

#include "engine/engine_support.hpp"

namespace lotwise::testing {

// Each source has nominal 0 V and an absolute spread of standard deviation 1 V.
inline Study additive_model(Distribution law) {
  Circuit c;
  c.add_voltage_source("X1", "n1", "gnd", 0.0);
  c.add_voltage_source("X2", "n2", "n1", 0.0);
  c.add_voltage_source("X3", "n3", "n2", 0.0);
  c.add_voltage_source("X4", "n4", "n3", 0.0);
  c.add_resistor("RL", "n4", "gnd", 1e3);
  Variation v;
  v.targets = {"X*"};
  v.distribution = law;
  v.relative = false;
  // Normal: 3 V at 3 sigma. Rectangular: half-width sqrt(3) V.
  v.tolerance = law == Distribution::uniform ? std::sqrt(3.0) : 3.0;
  v.sigmas = 3.0;
  return make_study(c, {measure("y", MeasurementKind::node_voltage, {}, {"n4"})}, {v});
}

}  // namespace lotwise::testing
