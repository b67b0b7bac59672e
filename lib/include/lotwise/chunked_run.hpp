#pragma once
// A Monte Carlo run cut into chunks that other processes (a cluster's workers) evaluate,
// merged here in chunk order: the answer is the same, bit for bit, as Study::run with the
// same options on any number of threads.
//
//   ChunkedRun run(study, options);
//   run.add(evaluate_chunks(study, options, 0, 1, ""));       // chunk 0 sets the ranges
//   const std::string ranges = run.ranges();
//   // anywhere, in any order, each with its own copy of the study and options:
//   //   piece = evaluate_chunks(study, options, first, count, ranges)
//   run.add(piece);                                          // in any order
//   YieldResult result = run.result();                       // once run.finished()
#include <cstdint>
#include <memory>
#include <string>

#include "lotwise/result.hpp"
#include "lotwise/run_options.hpp"

namespace lotwise {

class Study;

class ChunkedRun {
 public:
  /// Checks the options (RunError names the one at fault). Keeps references to `study`,
  /// which must outlive this object; `options` is copied (progress and stop are unused).
  ChunkedRun(const Study& study, const RunOptions& options);
  ~ChunkedRun();
  ChunkedRun(const ChunkedRun&) = delete;
  ChunkedRun& operator=(const ChunkedRun&) = delete;

  /// Chunks the run is cut into.
  std::uint64_t chunks() const;
  /// Chunks merged so far; they are always the first ones.
  std::uint64_t merged() const;
  /// Every chunk merged, or an adaptive target (RunOptions::target_half_width,
  /// tolerance_digits) met: no more pieces are needed.
  bool finished() const;
  /// True once the chunks every other chunk depends on are in: chunk 0, whose values set
  /// the histogram ranges (immediately true when the run keeps no histograms).
  bool ready() const;
  /// What evaluate_chunks needs besides the study and options: the histogram ranges, as
  /// bytes. Throws RunError before ready().
  std::string ranges() const;

  /// Takes a piece from evaluate_chunks. Pieces may come in any order; each chunk is
  /// merged once every chunk before it is in. Throws RunError for a piece of another
  /// study or other options, a damaged piece, or a chunk given twice. Pieces arriving
  /// after finished() are ignored.
  void add(const std::string& piece);

  /// The result of the chunks merged so far; `complete` is false unless finished().
  YieldResult result() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Evaluates chunks [first, first + count) of the run `options` describes, on the calling
/// thread, into a piece for ChunkedRun::add. `ranges` is ChunkedRun::ranges(); it may be
/// empty only for a piece that holds chunk 0 alone (or when the run keeps no histograms).
/// Throws RunError for chunks outside the run or ranges of another run.
std::string evaluate_chunks(const Study& study, const RunOptions& options, std::uint64_t first,
                            std::uint64_t count, const std::string& ranges);

}  // namespace lotwise
