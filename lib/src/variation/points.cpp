#include "variation/points.hpp"

#include <utility>

#include <boost/random/sobol.hpp>
#include <boost/random/uniform_int_distribution.hpp>

#include "cpu_dispatch.hpp"
#include "lotwise/error.hpp"
#include "variation/common_draws.hpp"
#include "variation/spread.hpp"

namespace lotwise {

const char* to_string(Sampler sampler) {
  switch (sampler) {
    case Sampler::monte_carlo: return "monte_carlo";
    case Sampler::sobol: return "sobol";
    case Sampler::latin_hypercube: return "latin_hypercube";
  }
  return "?";
}

namespace detail {
namespace {

inline bool parity(std::uint64_t x) {
#if defined(__GNUC__) || defined(__clang__)
  return __builtin_parityll(x) != 0;
#else
  x ^= x >> 32; x ^= x >> 16; x ^= x >> 8; x ^= x >> 4; x ^= x >> 2; x ^= x >> 1;
  return (x & 1u) != 0;
#endif
}

// Index of the lowest set bit of x > 0: the Gray-code bit that flips going to x.
inline unsigned lowest_bit(std::uint64_t x) {
#if defined(__GNUC__) || defined(__clang__)
  return static_cast<unsigned>(__builtin_ctzll(x));
#else
  unsigned b = 0;
  while (!(x & 1u)) { x >>= 1; ++b; }
  return b;
#endif
}

}  // namespace

std::size_t sobol_max_dimension() { return boost::random::default_sobol_table::max_dimension; }

SobolDirections::SobolDirections(std::size_t dimension)
    : dimension_(dimension), v_(64 * dimension) {
  if (dimension > sobol_max_dimension()) {
    throw RunError("the sobol sampler supports up to " + std::to_string(sobol_max_dimension()) +
                   " random coordinates; this design has " + std::to_string(dimension) +
                   " (use monte_carlo or latin_hypercube)");
  }
  if (dimension == 0) return;
  boost::random::sobol engine(dimension);
  for (unsigned b = 0; b < 64; ++b) {
    // seed(n) makes the next point number n + 1; the Gray code of 2^(b+1) - 1 is 2^b.
    const std::uint64_t last = b == 63 ? ~std::uint64_t{0} : (std::uint64_t{1} << (b + 1)) - 1;
    engine.seed(last - 1);
    for (std::size_t j = 0; j < dimension; ++j) v_[b * dimension + j] = engine();
  }
}

void sobol_point(const SobolDirections& directions, std::uint64_t index, std::uint64_t* out) {
  const std::uint64_t gray = index ^ (index >> 1);
  for (std::size_t j = 0; j < directions.dimension(); ++j) {
    std::uint64_t x = 0;
    for (unsigned b = 0; b < 64; ++b) {
      if ((gray >> b) & 1u) x ^= directions.at(b, j);
    }
    out[j] = x;
  }
}

void scramble_sobol(const SobolDirections& directions, Engine& engine, std::uint64_t* scrambled,
                    std::uint64_t* shift) {
  const std::size_t d = directions.dimension();
  std::uint64_t rows[64];
  for (std::size_t j = 0; j < d; ++j) {
    // Lower-triangular in the digits (most significant first) with a unit diagonal:
    // output bit p depends on input bit p and random ones of the more significant bits.
    for (unsigned p = 0; p < 64; ++p) {
      const std::uint64_t above = p == 63 ? 0 : ~std::uint64_t{0} << (p + 1);
      rows[p] = (engine() & above) | (std::uint64_t{1} << p);
    }
    shift[j] = engine();
    for (unsigned b = 0; b < 64; ++b) {
      const std::uint64_t v = directions.at(b, j);
      std::uint64_t y = 0;
      for (unsigned p = 0; p < 64; ++p) y |= static_cast<std::uint64_t>(parity(rows[p] & v)) << p;
      scrambled[b * d + j] = y;
    }
  }
}

void PeekEngine::seed(std::uint64_t value) {
  // Knuth's multiplicative initialisation, as Engine::seed(value).
  x_[0] = value;
  for (std::size_t i = 1; i < n; ++i) {
    x_[i] = Engine::initialization_multiplier * (x_[i - 1] ^ (x_[i - 1] >> 62)) + i;
  }
  i_ = n;
}

LOTWISE_INTEGER_CLONES void PeekEngine::refill() {
  constexpr std::size_t m = Engine::shift_size;
  constexpr std::uint64_t upper = ~std::uint64_t{0} << Engine::mask_bits;
  constexpr std::uint64_t lower = ~upper;
  constexpr std::uint64_t a = Engine::xor_mask;
  auto mixed = [&](std::uint64_t high, std::uint64_t low) {
    return (((high & upper) | (low & lower)) >> 1) ^ ((std::uint64_t{0} - (low & 1u)) & a);
  };
  // Three loops instead of indices modulo n.
  for (std::size_t j = 0; j < n - m; ++j) x_[j] = x_[j + m] ^ mixed(x_[j], x_[j + 1]);
  for (std::size_t j = n - m; j < n - 1; ++j) x_[j] = x_[j - (n - m)] ^ mixed(x_[j], x_[j + 1]);
  x_[n - 1] = x_[m - 1] ^ mixed(x_[n - 1], x_[0]);
  for (std::size_t j = 0; j < n; ++j) {
    std::uint64_t z = x_[j];
    z ^= (z >> Engine::tempering_u) & Engine::tempering_d;
    z ^= (z << Engine::tempering_s) & Engine::tempering_b;
    z ^= (z << Engine::tempering_t) & Engine::tempering_c;
    out_[j] = z ^ (z >> Engine::tempering_l);
  }
  i_ = 0;
}

std::uint64_t replicate_seed(std::uint64_t seed, std::uint64_t replicate) {
  return chunk_seed(~seed, replicate);
}

PointStream::PointStream(const VariationModel& model, Sampler sampler, std::uint32_t chunk_size,
                         const SobolDirections* directions)
    : model_(model),
      sampler_(sampler),
      directions_(directions),
      dimension_(model.dimension()),
      point_(model.dimension()) {
  if (sampler_ == Sampler::sobol) {
    if (!directions_ || directions_->dimension() != dimension_) {
      throw Error("internal: the sobol sampler needs direction numbers of the model's dimension");
    }
    scrambled_.resize(64 * dimension_);
    shift_.resize(dimension_);
    state_.resize(dimension_);
  } else if (sampler_ == Sampler::latin_hypercube) {
    block_.resize(static_cast<std::size_t>(chunk_size) * dimension_);
    order_.resize(chunk_size);
  }
  for (const Coordinate& c : model.coordinates()) {
    if (runs_.empty() || runs_.back().normal != c.normal) runs_.push_back(Run{0, c.normal});
    ++runs_.back().count;
    normal_mask_.push_back(c.normal ? -1 : 0);
  }
  // The pattern once per point of the most next_into() draws at once, and once more for a
  // run that starts within a point.
  const std::vector<std::int64_t> pattern = normal_mask_;
  for (std::size_t p = 0; p < most_points; ++p) {
    normal_mask_.insert(normal_mask_.end(), pattern.begin(), pattern.end());
  }
}

void PointStream::start(std::uint64_t seed, std::uint64_t chunk, std::uint64_t replicate,
                        std::uint64_t begin, std::size_t count) {
  const auto& coordinates = model_.coordinates();
  switch (sampler_) {
    case Sampler::monte_carlo:
      peek_engine_.seed(chunk_seed(seed, chunk));
      break;
    case Sampler::sobol: {
      if (replicate != replicate_ || seed != seed_ || scrambled_.empty()) {
        Engine engine(replicate_seed(seed, replicate));
        scramble_sobol(*directions_, engine, scrambled_.data(), shift_.data());
        replicate_ = replicate;
        seed_ = seed;
      }
      index_ = begin;
      const std::uint64_t gray = begin ^ (begin >> 1);
      for (std::size_t j = 0; j < dimension_; ++j) {
        std::uint64_t x = shift_[j];
        for (unsigned b = 0; b < 64; ++b) {
          if ((gray >> b) & 1u) x ^= scrambled_[b * dimension_ + j];
        }
        state_[j] = x;
      }
      break;
    }
    case Sampler::latin_hypercube: {
      // McKay, Beckman & Conover: in every coordinate, one point in each of `count`
      // equal strata, the strata paired at random between coordinates.
      engine_.seed(chunk_seed(seed, chunk));
      const auto n = static_cast<std::uint32_t>(count);
      for (std::size_t j = 0; j < dimension_; ++j) {
        for (std::uint32_t i = 0; i < n; ++i) order_[i] = i;
        for (std::uint32_t i = n; i > 1; --i) {
          const std::uint32_t k = boost::random::uniform_int_distribution<std::uint32_t>(0, i - 1)(engine_);
          std::swap(order_[i - 1], order_[k]);
        }
        for (std::uint32_t i = 0; i < n; ++i) {
          const double u = (static_cast<double>(order_[i]) + uniform_open(engine_)) / static_cast<double>(n);
          block_[i * dimension_ + j] = coordinates[j].normal ? normal_quantile(u) : u;
        }
      }
      position_ = 0;
      break;
    }
  }
}

const double* PointStream::next() {
  if (sampler_ == Sampler::latin_hypercube && dimension_ > 0) return &block_[position_++ * dimension_];
  return next_into(point_.data());
}

double* PointStream::next_into(double* out, std::size_t count) {
  if (count > most_points) throw Error("internal: more points at once than PointStream::most_points");
  switch (sampler_) {
    case Sampler::monte_carlo: {
      // Runs of common draws side by side, across the points, each other draw by Boost
      // from the same state. Coordinate j of the run is coordinate j % dimension of its
      // point; the mask repeats the points' pattern so a run reads it straight on.
      const std::size_t total = count * dimension_;
      for (std::size_t j = 0; j < total;) {
        std::size_t ready = total - j;
        const std::uint64_t* outputs = peek_engine_.peek(ready);
        const std::int64_t* normal = &normal_mask_[j % dimension_];
        const std::size_t drawn = draw_common_prefix(outputs, normal, ready, out + j);
        peek_engine_.skip(drawn);
        j += drawn;
        if (drawn < ready) {
          out[j] = normal[drawn] != 0 ? normal_(peek_engine_) : uniform_(peek_engine_);
          ++j;
        }
      }
      return out;
    }
    case Sampler::sobol:
      for (std::size_t p = 0; p < count; ++p) {
        double* point = out + p * dimension_;
        std::size_t j = 0;
        for (const Run& run : runs_) {
          const std::size_t end = j + run.count;
          if (run.normal) {
            for (; j < end; ++j) point[j] = normal_quantile(to_unit(state_[j]));
          } else {
            for (; j < end; ++j) point[j] = to_unit(state_[j]);
          }
        }
        ++index_;
        const unsigned b = lowest_bit(index_);
        for (std::size_t k = 0; k < dimension_; ++k) state_[k] ^= scrambled_[b * dimension_ + k];
      }
      return out;
    case Sampler::latin_hypercube:
      for (std::size_t p = 0; p < count && dimension_ > 0; ++p) {
        const double* point = &block_[position_++ * dimension_];
        for (std::size_t j = 0; j < dimension_; ++j) out[p * dimension_ + j] = point[j];
      }
      return out;
  }
  return out;
}

}  // namespace detail
}  // namespace lotwise
