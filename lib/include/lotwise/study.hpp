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

/// Per-sample outcome of one evaluation. `saturated`: every value was computed, but an
/// op-amp passed its output limits where a measurement assumed it linear (at the operating
/// point, or at a trip point); those measurements hold NaN.
enum class SampleStatus { ok, singular, invalid_value, saturated };

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
  /// Names of the parameters a variation moves (by a random spread or with temperature).
  std::vector<std::string> varied_parameters() const;
  /// Names of the random coordinates, in the order the samplers fill them: a part's own
  /// deviation is named after its parameter ("R1"); shared ones "lot of R*",
  /// "network of RN*"; coefficient ones "R1.tempco"; a drawn temperature "temperature".
  std::vector<std::string> coordinate_names() const;
  /// Measurement values with every parameter at nominal.
  const std::vector<double>& nominal_values() const;

  /// Evaluates every measurement for one parameter vector. Thread-safe; slow path for
  /// single evaluations (allocates its scratch space). Measurements withheld for
  /// saturation are NaN and the status is SampleStatus::saturated.
  SampleStatus evaluate(const std::vector<double>& parameters, std::vector<double>& values) const;

  /// Runs the yield analysis with the options' sampler.
  YieldResult run(const RunOptions& options) const;
  /// Runs with the design's own run settings.
  YieldResult run() const;

  struct Impl;

 private:
  friend class ChunkedRun;
  friend std::string evaluate_chunks(const Study& study, const RunOptions& options,
                                     std::uint64_t first, std::uint64_t count,
                                     const std::string& ranges);
  std::unique_ptr<Impl> impl_;
};

}  // namespace lotwise
