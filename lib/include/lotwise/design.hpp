#pragma once
// Everything a yield study needs, as the user wrote it.
#include <cstdint>
#include <string>
#include <vector>

#include "lotwise/circuit.hpp"
#include "lotwise/measurement.hpp"
#include "lotwise/spec.hpp"
#include "lotwise/variation.hpp"

namespace lotwise {

/// Defaults for a run that a design file may carry; the caller may override each.
struct RunSettings {
  std::uint64_t samples = 10000;
  std::uint64_t seed = 1;
  unsigned threads = 0;  ///< 0: one per hardware thread
};

struct Design {
  std::string title;
  Circuit circuit;
  std::vector<Variation> variations;
  std::vector<Measurement> measurements;
  std::vector<Spec> specs;
  RunSettings run;
};

}  // namespace lotwise
