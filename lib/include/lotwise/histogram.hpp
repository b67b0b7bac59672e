#pragma once
// A fixed-bin histogram: bounded memory, exact integer merges (so chunked runs give the
// same bits on any thread count), and quantiles by interpolation within a bin.
#include <cstddef>
#include <cstdint>
#include <vector>

#include "lotwise/statistics.hpp"

namespace lotwise {

class Histogram {
 public:
  /// An empty histogram with no range (every value counts as out of range).
  Histogram() = default;
  /// `bins` equal bins over [low, high); values below or above count apart. NaN is not
  /// counted. Throws Error unless low < high (both finite) and bins >= 1.
  Histogram(double low, double high, std::size_t bins);

  /// Allocates nothing.
  void add(double x) { add(&x, 1, 1); }
  /// add() for values[0], values[stride], ... (n values). Allocates nothing.
  void add(const double* values, std::size_t n, std::size_t stride);
  /// A histogram with these counts, e.g. one carried from another process; throws Error
  /// unless the range is valid and total == below + above + the bin counts.
  static Histogram from_counts(double low, double high, std::vector<std::uint64_t> counts,
                               std::uint64_t below, std::uint64_t above, std::uint64_t total);
  /// Adds another histogram of the same range and bins; throws Error otherwise.
  void merge(const Histogram& other);

  bool has_range() const { return !counts_.empty(); }
  double low() const { return low_; }
  double high() const { return high_; }
  std::size_t bins() const { return counts_.size(); }
  const std::vector<std::uint64_t>& counts() const { return counts_; }
  std::uint64_t below() const { return below_; }  ///< values below low()
  std::uint64_t above() const { return above_; }  ///< values at or above high(), +inf included
  std::uint64_t total() const { return total_; }  ///< every value added but NaN

  /// The p-quantile (0 <= p <= 1) of the values: the point where the empirical
  /// distribution function, linear within each bin, reaches p. NaN if it falls below or
  /// above the range, or the histogram is empty. Its error is below one bin width.
  double quantile(double p) const;

  /// Probabilistically symmetric coverage interval at `coverage` (JCGM 101:2008, 7.7):
  /// the (1 - coverage)/2 and (1 + coverage)/2 quantiles.
  Interval coverage_interval(double coverage) const;

  /// The occupied bins merged into at most `max_bins` equal bins (whole groups of this
  /// histogram's bins, so no count is split); values outside keep their below / above
  /// counts. Empty (no range) if no value fell within the range.
  Histogram coarsened(std::size_t max_bins) const;

 private:
  double low_ = 0.0;
  double high_ = 0.0;
  double scale_ = 0.0;  ///< bins / (high - low)
  std::vector<std::uint64_t> counts_;
  std::uint64_t below_ = 0;
  std::uint64_t above_ = 0;
  std::uint64_t total_ = 0;
};

}  // namespace lotwise
