#pragma once
// Private: how a run is cut into chunks and replicates, and what every chunk records;
// fixed by the study and the options alone, so any process evaluating a chunk agrees.
#include <cstddef>
#include <cstdint>
#include <vector>

#include "lotwise/run_options.hpp"
#include "study/study_impl.hpp"

namespace lotwise::detail {

/// Where the chunks lie: replicate r holds `base` points, plus one for the first `extra`
/// replicates; its chunks cover points [j C, (j + 1) C) of its own sequence, and the
/// replicates follow one another in the sample numbering (so sample numbers grow with
/// the chunk number).
struct ChunkLayout {
  std::uint64_t chunk = 1, base = 0, extra = 0, replicates = 1;
  std::uint64_t chunks_long = 0, chunks_short = 0;  ///< chunks of a replicate of base+1 / base

  struct Range {
    std::uint64_t replicate, begin, count, first_sample;
  };

  ChunkLayout(std::uint64_t samples, std::uint64_t replicate_count, std::uint64_t chunk_size);
  std::uint64_t chunks() const { return extra * chunks_long + (replicates - extra) * chunks_short; }
  Range range(std::uint64_t k) const;
};

/// Checks the options; throws RunError naming the one at fault.
void check_options(const RunOptions& options);

/// The replicates a run is split into (RunOptions::replicates, or the sampler's default).
std::uint32_t replicates_of(const RunOptions& options);

struct RunShape {
  std::size_t measurements = 0;
  std::size_t specs = 0;
  std::uint32_t replicates = 1;
  ChunkLayout layout;
  std::uint64_t chunks = 0;
  std::size_t evaluations = 1;  ///< per build: one per operating temperature
  std::size_t sweep = 0;        ///< operating temperatures of a sweep (0: none)
  std::vector<std::size_t> varied;  ///< parameters a variation moves
  bool histograms = false;
  bool attribution = false;
  std::uint64_t regression_samples = 0;  ///< builds kept for regression and ranks

  /// Checks the options (throws RunError) and lays the run out.
  RunShape(const Study::Impl& study, const RunOptions& options);
};

}  // namespace lotwise::detail
