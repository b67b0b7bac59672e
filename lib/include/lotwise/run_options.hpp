#pragma once
// How one Monte Carlo run is carried out.
#include <atomic>
#include <cstdint>
#include <functional>

namespace lotwise {

struct RunOptions {
  std::uint64_t samples = 10000;
  std::uint64_t seed = 1;
  /// Worker threads; 0 uses one per hardware thread. The answer does not depend on it.
  unsigned threads = 0;
  /// Samples per chunk. Chunk k draws from a stream that depends only on (seed, k),
  /// so changing this changes the draws; changing `threads` does not.
  std::uint32_t chunk_size = 1024;
  /// Confidence level of the reported intervals.
  double confidence = 0.95;
  /// Keep every sample's measurement values and pass flag in the result.
  bool keep_samples = false;
  /// Called from one thread at a time as chunks are merged, with samples done so far.
  std::function<void(std::uint64_t done, std::uint64_t total)> progress;
  /// When set to true by another thread, the run stops taking new chunks and returns
  /// the chunks merged so far, marked incomplete.
  const std::atomic<bool>* stop = nullptr;
};

}  // namespace lotwise
