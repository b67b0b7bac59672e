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
  /// Keep every sample's measurement values, varied parameter values and pass flag in
  /// the result.
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
  /// Adaptive run by numerical tolerance (JCGM 101:2008, 7.9): when 1, 2 or 3, the
  /// samples are taken in batches of max(10^4, 100 / (1 - confidence)) and the run stops
  /// at the first batch where, for every measurement with a spread, twice the standard
  /// deviation of the batch averages of its mean, standard deviation and coverage
  /// interval ends lies within the numerical tolerance of its standard deviation stated
  /// with this many significant digits. `samples` is the cap. With target_half_width too,
  /// both must hold. Needs a single replicate and histograms.
  std::uint32_t tolerance_digits = 0;
  /// Stream the correlations of every varied parameter with every measurement and the
  /// failing builds' parameter shifts (YieldResult::correlations, failure_shift).
  bool attribution = true;
  /// With attribution: the first this many builds (fewer if the run is shorter) also
  /// give the standardized regression coefficients and rank correlations
  /// (YieldResult::standardized_regression, rank_correlations); 0 computes none.
  std::uint64_t regression_samples = 10000;
  /// Builds made from one lot (reel) of parts: builds i with the same i / builds_per_lot
  /// share every lot deviation (Variation::lot_tolerance), drawn from a stream of their
  /// own keyed by (seed, lot, coordinate). Capability is then also reported within lots
  /// (Cp, Cpk from the pooled within-lot spread) beside the overall Pp, Ppk. 0: each
  /// build draws its own lot.
  std::uint64_t builds_per_lot = 0;
};

}  // namespace lotwise
