// A run whose chunks are evaluated elsewhere: the same evaluator and merger as
// Study::run, with the chunk tallies carried as bytes in between.
#include "lotwise/chunked_run.hpp"

#include <memory>
#include <string>
#include <utility>

#include "lotwise/error.hpp"
#include "study/chunk_evaluation.hpp"
#include "study/run_merger.hpp"
#include "study/run_shape.hpp"
#include "study/study_impl.hpp"
#include "study/tally_codec.hpp"

namespace lotwise {

namespace {

RunOptions portable(const RunOptions& options) {
  RunOptions o = options;
  o.progress = nullptr;
  o.stop = nullptr;
  return o;
}

}  // namespace

struct ChunkedRun::Impl {
  RunOptions options;
  detail::RunShape shape;
  std::uint64_t fingerprint;
  detail::RunMerger merger;

  Impl(const Study::Impl& s, const RunOptions& o)
      : options(portable(o)),
        shape(s, options),
        fingerprint(detail::run_fingerprint(s, options, shape)),
        merger(s, options, shape) {}
};

ChunkedRun::ChunkedRun(const Study& study, const RunOptions& options)
    : impl_(std::make_unique<Impl>(*study.impl_, options)) {}
ChunkedRun::~ChunkedRun() = default;

std::uint64_t ChunkedRun::chunks() const { return impl_->shape.chunks; }
std::uint64_t ChunkedRun::merged() const { return impl_->merger.merged(); }
bool ChunkedRun::finished() const { return impl_->merger.finished(); }
bool ChunkedRun::ready() const { return impl_->merger.ranges_ready(); }

std::string ChunkedRun::ranges() const {
  if (!ready()) throw RunError("the histogram ranges are set by chunk 0: add its piece first");
  return detail::encode_ranges(impl_->merger.ranges(), impl_->fingerprint);
}

void ChunkedRun::add(const std::string& piece) {
  std::vector<detail::ChunkTally> chunks =
      detail::decode_chunks(piece, impl_->fingerprint, impl_->shape);
  for (auto& c : chunks) {
    // Every chunk but the first is tallied into histograms of the set ranges.
    const bool pilot = c.index == 0 && impl_->shape.histograms;
    if (pilot && !c.histogram_values.empty()) {
      throw RunError("cannot read a piece of a chunked run: chunk 0 must be evaluated without ranges");
    }
    if (impl_->shape.histograms && !pilot &&
        c.histogram_values.size() != impl_->shape.measurements) {
      throw RunError("cannot read a piece of a chunked run: chunk " + std::to_string(c.index) +
                     " was evaluated without the histogram ranges");
    }
    impl_->merger.add(std::move(c));
  }
}

YieldResult ChunkedRun::result() const { return impl_->merger.result(); }

std::string evaluate_chunks(const Study& study, const RunOptions& options, std::uint64_t first,
                            std::uint64_t count, const std::string& ranges) {
  const Study::Impl& s = *study.impl_;
  const RunOptions o = portable(options);
  const detail::RunShape shape(s, o);
  const std::uint64_t fingerprint = detail::run_fingerprint(s, o, shape);
  if (count == 0 || first >= shape.chunks || count > shape.chunks - first) {
    throw RunError("chunks " + std::to_string(first) + " to " + std::to_string(first + count) +
                   " lie outside the run's " + std::to_string(shape.chunks) + " chunks");
  }
  std::vector<Histogram> range_histograms;
  if (shape.histograms) {
    if (ranges.empty()) {
      if (first != 0 || count != 1) {
        throw RunError("chunks after the first need the histogram ranges (ChunkedRun::ranges)");
      }
    } else {
      range_histograms = detail::decode_ranges(ranges, fingerprint, shape);
    }
  }
  std::unique_ptr<detail::SobolDirections> directions;
  if (o.sampler == Sampler::sobol) {
    directions = std::make_unique<detail::SobolDirections>(s.model.dimension());
  }
  detail::ChunkEvaluator evaluator(s, o, shape, directions.get());
  std::vector<detail::ChunkTally> tallies;
  for (std::uint64_t k = first; k < first + count; ++k) {
    tallies.push_back(evaluator.evaluate(k, range_histograms));
  }
  return detail::encode_chunks(tallies, fingerprint);
}

}  // namespace lotwise
