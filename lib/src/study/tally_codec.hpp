#pragma once
// Private: chunk tallies and histogram ranges as bytes, to travel between processes. The
// bytes start with a format tag, the byte order and a fingerprint of the study and the
// options, so a piece of another run is refused instead of merged.
#include <cstdint>
#include <string>
#include <vector>

#include "lotwise/histogram.hpp"
#include "study/run_shape.hpp"
#include "study/tally.hpp"

namespace lotwise::detail {

/// A 64-bit digest of what decides a run's chunks: the parameter, coordinate,
/// measurement and spec names, every parameter's value at a fixed probe point of the
/// variation model, the measurements there, and the options that shape the draws and
/// the tallies.
std::uint64_t run_fingerprint(const Study::Impl& study, const RunOptions& options,
                              const RunShape& shape);

std::string encode_chunks(const std::vector<ChunkTally>& chunks, std::uint64_t fingerprint);
/// Throws RunError naming the fault for bytes of another run or damaged bytes.
std::vector<ChunkTally> decode_chunks(const std::string& bytes, std::uint64_t fingerprint,
                                      const RunShape& shape);

std::string encode_ranges(const std::vector<Histogram>& ranges, std::uint64_t fingerprint);
std::vector<Histogram> decode_ranges(const std::string& bytes, std::uint64_t fingerprint,
                                     const RunShape& shape);

}  // namespace lotwise::detail
