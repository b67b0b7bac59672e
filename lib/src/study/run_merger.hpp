#pragma once
// Private: merges chunk tallies strictly in chunk order into a run's result, so the answer
// is the same however the chunks were spread over threads or processes. Decides the
// adaptive stops on the merged prefix alone.
#include <cstdint>
#include <map>
#include <vector>

#include "lotwise/result.hpp"
#include "study/run_shape.hpp"
#include "study/tally.hpp"

namespace lotwise::detail {

/// The numerical tolerance of a standard uncertainty u stated with `digits` significant
/// digits (JCGM 101:2008, 7.9.2): u = c 10^l with c a `digits`-digit integer, delta =
/// 10^l / 2. NaN unless u is finite and > 0.
double numerical_tolerance(double u, unsigned digits);

class RunMerger {
 public:
  RunMerger(const Study::Impl& study, const RunOptions& options, const RunShape& shape);

  /// Takes a chunk in any order; merges every chunk that now continues the merged
  /// prefix. Chunks arriving after the run finished are dropped. Returns the number of
  /// chunks merged by this call. Throws RunError for a chunk number outside the run or
  /// one already taken.
  std::uint64_t add(ChunkTally&& chunk);

  std::uint64_t merged() const { return merged_; }
  /// Every chunk merged, or an adaptive target met.
  bool finished() const { return merged_ == shape_.chunks || stopped_; }
  bool target_met() const { return stopped_; }
  /// After the first chunk: the empty histograms later chunks start from (none if the
  /// run keeps no histograms).
  bool ranges_ready() const { return !shape_.histograms || merged_ > 0; }
  const std::vector<Histogram>& ranges() const { return ranges_; }

  /// The result of the chunks merged so far (complete if finished()).
  YieldResult result() const;

 private:
  void merge(ChunkTally& chunk);
  void update_tolerance_batches(const ChunkTally& chunk);
  bool tolerance_reached();

  const Study::Impl& study_;
  const RunOptions& options_;
  const RunShape& shape_;
  std::map<std::uint64_t, ChunkTally> pending_;
  std::uint64_t merged_ = 0;
  bool stopped_ = false;

  Tally total_;
  std::vector<Tally> at_temperature_;
  std::vector<Tally> per_replicate_;
  std::vector<Histogram> histograms_;
  std::vector<Histogram> ranges_;
  std::vector<PairMoments> pairs_;
  std::vector<RunningStats> parameter_all_, parameter_failing_;
  std::vector<double> values_, parameters_;
  std::vector<std::uint8_t> pass_;
  std::vector<double> regression_rows_;

  // Numerical tolerance (JCGM 101:2008, 7.9): per batch of chunks, each measurement's
  // mean, standard deviation and coverage interval ends.
  std::uint64_t batch_chunks_ = 0;
  Tally batch_;
  std::vector<Histogram> batch_histograms_;
  struct BatchFigures {
    RunningStats mean, std_dev, low, high;
  };
  std::vector<BatchFigures> batch_figures_;  ///< per measurement, over the batches
  std::uint64_t batches_ = 0;
  bool tolerance_met_ = false;
  std::vector<double> tolerance_;  ///< per measurement, the numerical tolerance delta

  // Builds per lot: the lot still open at the merged prefix's end, and per measurement
  // the pooled within-lot sum of squares and degrees of freedom of the closed lots.
  LotStats open_lot_;
  std::vector<double> within_ss_;
  std::vector<std::uint64_t> within_dof_;
  void close_lot(const LotStats& lot, std::vector<double>& ss, std::vector<std::uint64_t>& dof) const;
};

}  // namespace lotwise::detail
