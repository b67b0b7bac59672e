#pragma once
// Private: the samplers. Each fills points of standard coordinates, chunk by chunk; a
// chunk's points depend only on (seed, chunk index, replicate, position), never on the
// thread that draws them.
#include <cstddef>
#include <cstdint>
#include <vector>

#include <boost/random/normal_distribution.hpp>
#include <boost/random/uniform_01.hpp>

#include "lotwise/run_options.hpp"
#include "variation/model.hpp"
#include "variation/sampler.hpp"

namespace lotwise::detail {

/// Sobol direction numbers (Joe & Kuo, as tabulated in Boost.Random), 64 per dimension,
/// as 64-bit fractions. Read from boost::random::sobol itself: with Gray-code ordering,
/// point 2^(b+1) - 1 of the sequence is direction number b.
class SobolDirections {
 public:
  /// Dimensions up to Boost's table (3667); throws RunError beyond.
  explicit SobolDirections(std::size_t dimension);
  std::size_t dimension() const { return dimension_; }
  /// Direction number of Gray-code bit b (0..63) in dimension j.
  std::uint64_t at(unsigned b, std::size_t j) const { return v_[b * dimension_ + j]; }

 private:
  std::size_t dimension_;
  std::vector<std::uint64_t> v_;
};

/// Largest number of coordinates the Sobol sampler supports.
std::size_t sobol_max_dimension();

/// Point `index` (0 is the origin) of the unscrambled sequence, as 64-bit fractions.
void sobol_point(const SobolDirections& directions, std::uint64_t index, std::uint64_t* out);

/// A random linear matrix scramble with digital shift (Matousek 1998) drawn from `engine`:
/// writes the scrambled direction numbers (64 x dimension, layout as SobolDirections) and
/// the shift (one per dimension).
void scramble_sobol(const SobolDirections& directions, Engine& engine, std::uint64_t* scrambled,
                    std::uint64_t* shift);

/// A 64-bit fraction as a double in (0, 1): its top 53 bits, centred in their cell.
inline double to_unit(std::uint64_t x) {
  return (static_cast<double>(x >> 11) + 0.5) * 0x1.0p-53;
}

/// Stream seeds of the randomisation of replicate `replicate` (Sobol scramble).
std::uint64_t replicate_seed(std::uint64_t seed, std::uint64_t replicate);

/// MT19937-64 (Matsumoto & Nishimura), output for output the same as Engine from the same
/// seed, with the next outputs readable before they are taken: the monte_carlo sampler
/// makes the common draws from them (common_draws.hpp) and leaves the rest to
/// Boost.Random unchanged.
class PeekEngine {
 public:
  using result_type = std::uint64_t;
  static constexpr result_type min() { return 0; }
  static constexpr result_type max() { return ~result_type{0}; }

  void seed(std::uint64_t value);
  /// The next output, not taken.
  result_type peek() {
    if (i_ == n) refill();
    return out_[i_];
  }
  /// The next outputs, not taken: `count` of them, or as many as the current block
  /// still holds if fewer (then `count` is lowered to that, never to 0).
  const result_type* peek(std::size_t& count) {
    if (i_ == n) refill();
    if (count > n - i_) count = n - i_;
    return out_ + i_;
  }
  /// Takes `count` outputs peek(count) gave.
  void skip(std::size_t count) { i_ += count; }
  result_type operator()() {
    const result_type z = peek();
    ++i_;
    return z;
  }

 private:
  static constexpr std::size_t n = Engine::state_size;
  /// Advances the state by n outputs and tempers them all at once (a loop the compiler
  /// vectorises) rather than one by one as they are taken.
  void refill();
  std::uint64_t x_[n] = {};
  std::uint64_t out_[n] = {};
  std::size_t i_ = n;
};

/// One worker's sampler: fills the native coordinates of a model's points.
class PointStream {
 public:
  /// `directions` is needed (and must match the model's dimension) for sobol only.
  PointStream(const VariationModel& model, Sampler sampler, std::uint32_t chunk_size,
              const SobolDirections* directions);

  /// Starts a chunk: points [begin, begin + count) of replicate `replicate`'s sequence;
  /// `chunk` is the run-wide chunk index (it seeds monte_carlo and latin_hypercube).
  /// Allocates nothing.
  void start(std::uint64_t seed, std::uint64_t chunk, std::uint64_t replicate,
             std::uint64_t begin, std::size_t count);

  /// The next point's coordinates, valid until the next call. Allocates nothing.
  const double* next();
  /// Most points next_into() draws at once.
  static constexpr std::size_t most_points = 16;
  /// The next `count` (up to most_points) points' coordinates written into `out`, one
  /// point after another (dimension values each): the same points as `count` calls of
  /// next(). Returns out. Allocates nothing.
  double* next_into(double* out, std::size_t count = 1);

 private:
  const VariationModel& model_;
  Sampler sampler_;
  const SobolDirections* directions_;
  std::size_t dimension_;
  std::vector<double> point_;
  Engine engine_;  // latin_hypercube
  // sobol: the coordinates as runs of one kind (normal or not), in order.
  struct Run {
    std::size_t count;
    bool normal;
  };
  std::vector<Run> runs_;
  // Per coordinate: -1 normal, 0 uniform; repeated (see next_into).
  std::vector<std::int64_t> normal_mask_;
  PeekEngine peek_engine_;
  // monte_carlo. Both are stateless for our use: Boost's normal_distribution is a
  // ziggurat that keeps no cached second value, so draws depend only on the engine.
  boost::random::normal_distribution<double> normal_;
  boost::random::uniform_01<double> uniform_;
  // sobol
  std::vector<std::uint64_t> scrambled_;
  std::vector<std::uint64_t> shift_;
  std::vector<std::uint64_t> state_;
  std::uint64_t index_ = 0;
  std::uint64_t seed_ = 0;
  std::uint64_t replicate_ = static_cast<std::uint64_t>(-1);
  // latin_hypercube: the whole chunk, point-major
  std::vector<double> block_;
  std::vector<std::uint32_t> order_;
  std::size_t position_ = 0;
};

}  // namespace lotwise::detail
