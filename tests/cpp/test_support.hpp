#pragma once
// Shared helpers for lotwise's C++ tests: tolerance matchers and study builders.
#include <catch2/catch.hpp>

#include <string>
#include <utility>
#include <vector>

#include "lotwise/lotwise.hpp"

namespace lotwise::testing {

/// Relative closeness for well-conditioned quantities.
inline Catch::Matchers::Floating::WithinRelMatcher close_rel(double target, double rel = 1e-12) {
  return Catch::Matchers::WithinRel(target, rel);
}
inline Catch::Matchers::Floating::WithinAbsMatcher close_abs(double target, double abs) {
  return Catch::Matchers::WithinAbs(target, abs);
}

/// Nominal parameter vector of a circuit.
inline std::vector<double> nominal(const Circuit& c) {
  std::vector<double> v;
  for (const auto& p : c.parameters()) v.push_back(p.nominal);
  return v;
}

/// A measurement of `kind` with its inputs, output and frequency.
inline Measurement measure(std::string name, MeasurementKind kind,
                           std::vector<std::string> inputs, std::vector<std::string> output,
                           double frequency = 0.0) {
  Measurement m;
  m.name = std::move(name);
  m.kind = kind;
  m.inputs = std::move(inputs);
  m.output = std::move(output);
  m.frequency = frequency;
  return m;
}

inline Design make_design(Circuit circuit, std::vector<Measurement> measurements,
                          std::vector<Variation> variations = {}, std::vector<Spec> specs = {}) {
  Design d;
  d.title = "test design";
  d.circuit = std::move(circuit);
  d.measurements = std::move(measurements);
  d.variations = std::move(variations);
  d.specs = std::move(specs);
  return d;
}

inline Study make_study(Circuit circuit, std::vector<Measurement> measurements,
                        std::vector<Variation> variations = {}, std::vector<Spec> specs = {}) {
  return Study(make_design(std::move(circuit), std::move(measurements), std::move(variations),
                           std::move(specs)));
}

/// Nominal value of the measurement called `name`.
inline double nominal_value(const Study& study, const std::string& name) {
  const auto& ms = study.design().measurements;
  for (std::size_t i = 0; i < ms.size(); ++i) {
    if (ms[i].name == name) return study.nominal_values()[i];
  }
  FAIL("no measurement called " << name);
  return 0.0;
}

/// Path of a file in the source tree's tests/data folder.
inline std::string data_path(const std::string& name) {
  return std::string(LOTWISE_TEST_DATA_DIR) + "/" + name;
}

}  // namespace lotwise::testing
