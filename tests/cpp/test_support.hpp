#pragma once
// Shared helpers for lotwise's C++ tests: tolerance matchers and small circuit builders.
#include <catch2/catch.hpp>

#include <string>
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

/// Path of a file in the source tree's tests/data folder.
inline std::string data_path(const std::string& name) {
  return std::string(LOTWISE_TEST_DATA_DIR) + "/" + name;
}

}  // namespace lotwise::testing
