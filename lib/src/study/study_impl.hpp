#pragma once
// Private: the compiled state behind lotwise::Study.
#include <string>
#include <vector>

#include "lotwise/study.hpp"
#include "study/plan.hpp"
#include "variation/model.hpp"

namespace lotwise {

struct Study::Impl {
  Design design;
  Network network;
  detail::VariationModel model;
  detail::Plan plan;
  std::vector<double> nominal_parameters;
  std::vector<double> nominal_values;
  std::vector<std::size_t> spec_measurement;  ///< measurement index of each spec

  explicit Impl(Design d);
  /// Why the nominal evaluation found an op-amp saturated, in words.
  std::string saturation_message(const detail::Evaluator& evaluator) const;
};

/// Runs the chunked Monte Carlo loop (study/run.cpp).
YieldResult run_study(const Study::Impl& study, const RunOptions& options);

}  // namespace lotwise
