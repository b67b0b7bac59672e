#pragma once
// A design compiled for evaluation: immutable, shareable between threads.
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "lotwise/design.hpp"
#include "lotwise/network.hpp"
#include "lotwise/result.hpp"
#include "lotwise/run_options.hpp"

namespace lotwise {

/// Per-sample outcome of one evaluation.
enum class SampleStatus { ok, singular, invalid_value };

class Study {
 public:
  /// Checks the design (names, nodes, topology, specs) and lays out the solves.
  /// Throws DesignError or CircuitError with a message naming what is at fault.
  explicit Study(Design design);
  ~Study();
  Study(const Study&) = delete;
  Study& operator=(const Study&) = delete;
  Study(Study&&) noexcept;
  Study& operator=(Study&&) noexcept;

  const Design& design() const;
  const Network& network() const;

  /// Parameter names and nominal values, in the order evaluate() expects.
  std::vector<std::string> parameter_names() const;
  std::vector<double> nominal_parameters() const;
  /// Names of the varied parameters, one per random coordinate.
  std::vector<std::string> varied_parameters() const;
  /// Measurement values with every parameter at nominal.
  const std::vector<double>& nominal_values() const;

  /// Evaluates every measurement for one parameter vector. Thread-safe; slow path for
  /// single evaluations (allocates its scratch space).
  SampleStatus evaluate(const std::vector<double>& parameters, std::vector<double>& values) const;

  /// Runs the Monte Carlo yield analysis.
  YieldResult run(const RunOptions& options) const;
  /// Runs with the design's own run settings.
  YieldResult run() const;

  struct Impl;

 private:
  std::unique_ptr<Impl> impl_;
};

}  // namespace lotwise
