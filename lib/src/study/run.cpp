// The sampling loop on this machine's threads: fixed-size chunks, each with its own
// points (a random stream, or a stretch of a scrambled Sobol sequence), evaluated on
// worker threads and merged strictly in chunk order so the answer is the same on any
// number of threads (and in a ChunkedRun spread over other processes).
#include <algorithm>
#include <atomic>
#include <exception>
#include <map>
#include <memory>
#include <mutex>
#include <thread>
#include <utility>

#include "study/chunk_evaluation.hpp"
#include "study/run_merger.hpp"
#include "study/run_shape.hpp"
#include "study/study_impl.hpp"
#include "variation/points.hpp"

namespace lotwise {

YieldResult run_study(const Study::Impl& s, const RunOptions& o) {
  const detail::RunShape shape(s, o);
  std::unique_ptr<detail::SobolDirections> directions;
  if (o.sampler == Sampler::sobol) {
    directions = std::make_unique<detail::SobolDirections>(s.model.dimension());
  }
  unsigned threads = o.threads ? o.threads : std::max(1u, std::thread::hardware_concurrency());
  if (threads > shape.chunks) threads = static_cast<unsigned>(shape.chunks);

  detail::RunMerger merger(s, o, shape);
  std::atomic<std::uint64_t> next{0};
  std::atomic<bool> failed{false};
  std::atomic<bool> finished{false};
  std::mutex mutex;
  std::exception_ptr error;
  std::vector<Histogram> ranges;
  std::uint64_t limit = shape.histograms ? 1 : shape.chunks;

  auto worker = [&]() {
    try {
      detail::ChunkEvaluator evaluator(s, o, shape, directions.get());
      for (;;) {
        if (failed.load() || finished.load() || (o.stop && o.stop->load())) return;
        const std::uint64_t k = next.fetch_add(1);
        if (k >= limit) return;
        detail::ChunkTally tally = evaluator.evaluate(k, ranges);
        std::lock_guard<std::mutex> lock(mutex);
        merger.add(std::move(tally));
        if (merger.finished()) finished.store(true);
      }
    } catch (...) {
      std::lock_guard<std::mutex> lock(mutex);
      if (!error) error = std::current_exception();
      failed.store(true);
    }
  };

  if (shape.histograms) {
    worker();  // the first chunk alone: its values set the histogram ranges
    ranges = merger.ranges();
    limit = merger.merged() == 1 ? shape.chunks : 0;
    next.store(1);
  }
  if (!error) {
    if (threads <= 1) {
      worker();
    } else {
      std::vector<std::thread> pool;
      for (unsigned t = 0; t < threads; ++t) pool.emplace_back(worker);
      for (auto& t : pool) t.join();
    }
  }
  if (error) std::rethrow_exception(error);
  return merger.result();
}

}  // namespace lotwise
