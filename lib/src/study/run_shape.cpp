#include "study/run_shape.hpp"

#include <algorithm>
#include <limits>
#include <string>

#include "lotwise/error.hpp"

namespace lotwise::detail {

ChunkLayout::ChunkLayout(std::uint64_t samples, std::uint64_t replicate_count,
                         std::uint64_t chunk_size)
    : chunk(chunk_size),
      base(samples / replicate_count),
      extra(samples % replicate_count),
      replicates(replicate_count),
      chunks_long((base + 1 + chunk_size - 1) / chunk_size),
      chunks_short((base + chunk_size - 1) / chunk_size) {}

ChunkLayout::Range ChunkLayout::range(std::uint64_t k) const {
  std::uint64_t r, j, size;
  if (k < extra * chunks_long) {
    r = k / chunks_long;
    j = k % chunks_long;
    size = base + 1;
  } else {
    const std::uint64_t rest = k - extra * chunks_long;
    r = extra + rest / chunks_short;
    j = rest % chunks_short;
    size = base;
  }
  const std::uint64_t begin = j * chunk;
  return Range{r, begin, std::min(chunk, size - begin), r * base + std::min(r, extra) + begin};
}

std::uint32_t replicates_of(const RunOptions& o) {
  if (o.replicates > 0) return o.replicates;
  if (o.sampler == Sampler::monte_carlo) return 1;
  return static_cast<std::uint32_t>(std::min<std::uint64_t>(16, o.samples));
}

void check_options(const RunOptions& o) {
  if (o.samples == 0) throw RunError("the number of samples must be at least 1");
  if (o.chunk_size == 0) throw RunError("the chunk size must be at least 1");
  if (!(o.confidence > 0.0 && o.confidence < 1.0)) {
    throw RunError("the confidence level must lie strictly between 0 and 1");
  }
  constexpr std::uint64_t cap = std::numeric_limits<std::uint64_t>::max() / 2;
  if (o.samples > cap) throw RunError("the number of samples is too large");
  if (o.sampler != Sampler::monte_carlo && o.sampler != Sampler::sobol &&
      o.sampler != Sampler::latin_hypercube) {
    throw RunError("unknown sampler");
  }
  if (o.replicates > o.samples) {
    throw RunError("there are more replicates (" + std::to_string(o.replicates) +
                   ") than samples (" + std::to_string(o.samples) + ")");
  }
  if (o.replicates > 65536) throw RunError("at most 65536 replicates");
  if (!(o.target_half_width >= 0.0 && o.target_half_width < 0.5)) {
    throw RunError("the target half-width must lie in [0, 0.5)");
  }
  const bool adaptive = o.target_half_width > 0.0 || o.tolerance_digits > 0;
  if (adaptive && replicates_of(o) > 1) {
    throw RunError("an adaptive run (target half-width or tolerance digits) needs a single replicate");
  }
  if (o.tolerance_digits > 3) {
    throw RunError("tolerance digits must be 0 (off), 1, 2 or 3, not " +
                   std::to_string(o.tolerance_digits));
  }
  if (o.tolerance_digits > 0 && o.histogram_bins == 0) {
    throw RunError("tolerance digits need the histograms (histogram bins > 0) for the coverage interval ends");
  }
}

RunShape::RunShape(const Study::Impl& s, const RunOptions& o)
    : layout((check_options(o), o.samples), replicates_of(o), o.chunk_size) {
  measurements = s.design.measurements.size();
  specs = s.design.specs.size();
  replicates = replicates_of(o);
  chunks = layout.chunks();
  evaluations = s.model.evaluations();
  sweep = s.design.temperature.operating.size();
  for (const auto& e : s.model.entries()) {
    if (e.varies) varied.push_back(e.parameter);
  }
  histograms = o.histogram_bins > 0;
  attribution = o.attribution;
  regression_samples = o.attribution ? std::min(o.regression_samples, o.samples) : 0;
}

}  // namespace lotwise::detail
