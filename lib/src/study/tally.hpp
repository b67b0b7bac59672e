#pragma once
// Private: what the sampling loop accumulates, per chunk and merged in chunk order.
#include <cstddef>
#include <cstdint>
#include <vector>

#include "lotwise/histogram.hpp"
#include "lotwise/statistics.hpp"
#include "stats/association.hpp"

namespace lotwise::detail {

/// Counts and moments of a set of evaluations: of whole builds, of the builds at one
/// temperature of a sweep, or of one replicate.
struct Tally {
  std::uint64_t samples = 0;
  std::uint64_t passed = 0;
  std::uint64_t singular = 0;
  std::uint64_t invalid = 0;
  std::uint64_t saturated = 0;
  std::vector<std::uint64_t> spec_passed;
  std::vector<std::uint64_t> spec_saturated;         ///< failures on withheld values
  std::vector<std::uint64_t> measurement_saturated;  ///< values withheld for saturation
  std::vector<RunningStats> stats;

  Tally() = default;
  Tally(std::size_t measurements, std::size_t specs)
      : spec_passed(specs, 0),
        spec_saturated(specs, 0),
        measurement_saturated(measurements, 0),
        stats(measurements) {}

  void merge(const Tally& o);
};

/// Each measurement's moments over the builds of one lot (RunOptions::builds_per_lot).
struct LotStats {
  std::uint64_t lot = 0;
  std::vector<RunningStats> stats;
};

/// Everything one chunk contributes to a run.
struct ChunkTally {
  std::uint64_t index = 0;         ///< chunk number
  std::uint64_t replicate = 0;
  std::uint64_t first_sample = 0;  ///< number of the chunk's first build
  Tally builds;
  std::vector<Tally> temperatures;  ///< one per operating temperature of a sweep

  /// Once the ranges are set: per measurement, the values that entered its statistics,
  /// for the run's histograms (added where the chunks are merged: a chunk carries its
  /// values, not a copy of every bin). Before that (the first chunk) the raw values, one
  /// row of measurements per evaluation, to set the ranges from.
  std::vector<std::vector<double>> histogram_values;
  std::vector<double> pilot;

  /// Attribution: (measurement, varied parameter) co-moments, and each varied
  /// parameter's values over all evaluations and over the failing ones.
  std::vector<PairMoments> pairs;
  std::vector<RunningStats> parameter_all;
  std::vector<RunningStats> parameter_failing;

  /// Kept samples: measurement values (evaluations x measurements per build), varied
  /// parameter values (evaluations x varied per build) and each build's pass flag.
  std::vector<double> values;
  std::vector<double> parameters;
  std::vector<std::uint8_t> pass;

  /// Rows of (varied parameters, measurements), one per evaluation, of the builds whose
  /// number lies below RunOptions::regression_samples: the sample the regression and
  /// rank statistics are computed from.
  std::vector<double> regression_rows;

  /// With builds per lot: the lots this chunk's builds belong to, in order (the first
  /// and last may continue in the neighbouring chunks).
  std::vector<LotStats> lots;

  ChunkTally() = default;
  ChunkTally(std::size_t measurements, std::size_t specs, std::size_t sweep)
      : builds(measurements, specs), temperatures(sweep, Tally(measurements, specs)) {}
};

}  // namespace lotwise::detail
