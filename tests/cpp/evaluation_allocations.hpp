#pragma once
// Allocations made by an Evaluator over many evaluations, for the engine and decision
// tests' zero-allocation checks.
#include <vector>

#include "allocation_counter.hpp"
#include "study/plan.hpp"
#include "test_support.hpp"

namespace lotwise::testing {

// Runs `n` evaluations with parameters moved a little each time (so every solve does
// real work) and returns the allocations they made.
inline AllocationCounts allocations_of_evaluations(const Study& study, int n,
                                                   std::vector<double>& sink) {
  const Network& network = study.network();
  detail::Plan plan = detail::make_plan(network, study.design().measurements);
  // As the study does: bandwidth searches start from the nominal bandwidth.
  for (std::size_t i = 0; i < plan.measurements.size(); ++i) {
    plan.measurements[i].nominal_bandwidth = study.nominal_values()[i];
  }
  detail::Evaluator evaluator(network, plan);
  const std::vector<double> nominal_theta = study.nominal_parameters();
  std::vector<double> theta = nominal_theta;
  std::vector<double> values(plan.measurements.size());
  sink.assign(plan.measurements.size(), 0.0);
  int failures = 0;

  const AllocationCounts before = allocation_counts();
  for (int k = 0; k < n; ++k) {
    for (std::size_t i = 0; i < theta.size(); ++i) {
      const double wiggle = 1.0 + 1e-3 * static_cast<double>((k * 7 + static_cast<int>(i)) % 11 - 5);
      theta[i] = nominal_theta[i] * wiggle;
    }
    failures += evaluator.evaluate(theta.data(), values.data()) != SolveStatus::ok;
    failures += evaluator.any_saturated();
    for (std::size_t i = 0; i < values.size(); ++i) sink[i] += values[i];
  }
  const AllocationCounts made = allocation_counts() - before;
  CHECK(failures == 0);
  return made;
}

}  // namespace lotwise::testing
