#pragma once
// Private: evaluates the builds of one chunk into its tally. One per worker thread (or
// process); the tally depends only on the study, the options and the chunk number.
#include <cstdint>
#include <vector>

#include "lotwise/histogram.hpp"
#include "study/plan.hpp"
#include "study/run_shape.hpp"
#include "study/tally.hpp"
#include "variation/points.hpp"

namespace lotwise::detail {

class ChunkEvaluator {
 public:
  /// `directions` is needed for the sobol sampler only.
  ChunkEvaluator(const Study::Impl& study, const RunOptions& options, const RunShape& shape,
                 const SobolDirections* directions);

  /// Evaluates chunk `k`. `ranges` holds the histograms' (empty) ranges once the first
  /// chunk has set them: the chunk then carries the values for the histograms. With
  /// histograms kept and `ranges` empty it records its raw values instead (the pilot
  /// that sets the ranges).
  ChunkTally evaluate(std::uint64_t k, const std::vector<Histogram>& ranges);

 private:
  const Study::Impl& study_;
  const RunOptions& options_;
  const RunShape& shape_;
  Evaluator evaluator_;
  PointStream points_;
  // A block of up to Evaluator::lanes builds is drawn, then evaluated side by side, then
  // tallied in build order. Per (build, evaluation) of the block: parameters, values,
  // status and saturation flags.
  std::vector<BuildScratch> builds_;
  std::vector<double> theta_;
  std::vector<double> values_;
  std::vector<SolveStatus> status_;
  std::vector<unsigned char> withheld_;
  std::vector<unsigned char> any_saturated_;
  // Per measurement, the chunk's values that entered the statistics, reduced in two
  // passes at the chunk's end (no division per value, unlike RunningStats::add).
  std::vector<std::vector<double>> entered_;
  std::vector<const double*> entered_columns_;
  std::vector<std::uint8_t> spec_ok_;
  std::vector<std::uint8_t> spec_saturated_;
  // Builds per lot: the lot coordinates and the current lot's values of them (put into
  // each point drawn).
  std::vector<std::size_t> lot_coordinates_;
  std::vector<double> lot_values_;
  std::uint64_t current_lot_ = ~std::uint64_t{0};
  // The block's points, one after another.
  std::vector<double> block_points_;
  // Attribution: one row per evaluation of the chunk (varied parameters, measurements,
  // passed), reduced to moments at the chunk's end.
  std::vector<double> attribution_rows_;  // sized for a whole chunk once
  std::size_t attribution_filled_ = 0;     // values written in this chunk
  /// The next row's place (written in place: no resize, which would clear it first).
  double* next_attribution_row();
  mutable std::vector<double> moment_scratch_;
  mutable std::vector<double> parameter_scratch_;
  /// Whether every build of the block (one evaluation each) solved and had every value
  /// enter the statistics.
  bool all_entered(std::size_t block) const;
  /// Tallies such a block, bit for bit as the general loop.
  void tally_entered_block(ChunkTally& tally, std::size_t block);
  void attribution_moments(ChunkTally& tally, std::size_t a_count, std::size_t m_count) const;
  /// What common_moments wrote: nothing (a parameter value not finite), the parameters'
  /// moments, or those and every pair's.
  enum class Written { nothing, parameters, everything };
  Written common_moments(ChunkTally& tally, std::size_t a_count, std::size_t m_count) const;
  mutable std::vector<double> pair_scratch_;
};

}  // namespace lotwise::detail
