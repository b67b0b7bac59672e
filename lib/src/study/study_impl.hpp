#pragma once
// Private: the compiled state behind lotwise::Study.
#include <vector>

#include "lotwise/study.hpp"
#include "study/plan.hpp"
#include "variation/sampler.hpp"

namespace lotwise {

struct Study::Impl {
  Design design;
  Network network;
  detail::Sampler sampler;
  detail::Plan plan;
  std::vector<double> nominal_parameters;
  std::vector<double> nominal_values;
  std::vector<std::size_t> spec_measurement;  ///< measurement index of each spec

  explicit Impl(Design d);
};

/// Runs the chunked Monte Carlo loop (study/run.cpp).
YieldResult run_study(const Study::Impl& study, const RunOptions& options);

}  // namespace lotwise
