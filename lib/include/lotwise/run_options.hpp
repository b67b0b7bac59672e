#pragma once
// How one Monte Carlo run is carried out.
#include <atomic>
#include <cstdint>
#include <functional>

namespace lotwise {

/// How the random coordinates of the builds are chosen. Every method gives points of
/// the same standard coordinates, so all share one evaluator.
enum class Sampler {
  monte_carlo,      ///< independent pseudo-random draws (64-bit Mersenne Twister)
  sobol,            ///< Sobol points (Joe & Kuo directions), scrambled per replicate
  latin_hypercube,  ///< stratified in every coordinate within each chunk
};

const char* to_string(Sampler sampler);

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
  /// How the builds' random coordinates are chosen.
  Sampler sampler = Sampler::monte_carlo;
  /// Independent randomisations: the samples are split into this many replicates (as
  /// evenly as they go), each a fresh randomisation (Sobol: a new scramble), and the
  /// spread of the replicates' answers gives standard errors. 0 chooses 1 for
  /// monte_carlo and 16 for sobol and latin_hypercube.
  std::uint32_t replicates = 0;
  /// Called from one thread at a time as chunks are merged, with samples done so far.
  std::function<void(std::uint64_t done, std::uint64_t total)> progress;
  /// When set to true by another thread, the run stops taking new chunks and returns
  /// the chunks merged so far, marked incomplete.
  const std::atomic<bool>* stop = nullptr;
  /// Bins of each measurement's histogram (quantiles, coverage intervals); 0 keeps none.
  /// The range is set from the first chunk's values (docs/methods.md).
  std::uint32_t histogram_bins = 4096;
  /// Adaptive run: when > 0, stop at the first chunk boundary where the Clopper-Pearson
  /// interval of the yield is at most this half-width ((high - low) / 2); `samples` is
  /// then the cap. Decided on the merged chunks only, so any thread count stops at the
  /// same chunk. Needs a single replicate.
  double target_half_width = 0.0;
  /// Stream the correlations of every varied parameter with every measurement and the
  /// failing builds' parameter shifts (YieldResult::correlations, failure_shift).
  bool attribution = true;
};

}  // namespace lotwise
