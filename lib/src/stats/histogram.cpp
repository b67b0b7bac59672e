#include "lotwise/histogram.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "cpu_dispatch.hpp"
#include "lotwise/error.hpp"

namespace lotwise {

Histogram::Histogram(double low, double high, std::size_t bins)
    : low_(low), high_(high), counts_(bins, 0) {
  if (!(std::isfinite(low) && std::isfinite(high) && low < high) || bins == 0) {
    throw Error("a histogram needs a finite range low < high and at least one bin");
  }
  scale_ = static_cast<double>(bins) / (high - low);
}

namespace {

// The bins of n values (values[i * stride]) into `bin`, -1 for a value outside the range
// or NaN, and the totals, in registers (each in memory would make one long chain of
// increments). Without branches, so that the compiler vectorises it; the bins are
// counted after.
template <std::size_t Stride>
LOTWISE_AVX2_CLONES void find_bins(const double* values, std::size_t n, std::size_t stride,
                                   double low, double high, double scale, double last,
                                   std::int32_t* bin, std::uint64_t* totals) {
  std::uint64_t total = 0, below = 0, above = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const double x = values[i * (Stride ? Stride : stride)];
    total += x == x;  // NaN is not counted
    below += x < low;
    above += x >= high;
    // Made for every value, then chosen: a choice between values vectorises, an
    // operation made only inside the range would not. trunc(min(t, last)) is
    // min(trunc(t), last): the top edge's rounding clamped.
    const double t = std::min((x - low) * scale, last);
    bin[i] = static_cast<std::int32_t>(x >= low && x < high ? t : -1.0);
  }
  totals[0] += total;
  totals[1] += below;
  totals[2] += above;
}

}  // namespace

void Histogram::add(const double* values, std::size_t n, std::size_t stride) {
  std::uint64_t totals[3] = {0, 0, 0};
  if (counts_.size() > static_cast<std::size_t>(std::numeric_limits<std::int32_t>::max())) {
    // More bins than an int32 numbers: one value at a time.
    for (std::size_t i = 0; i < n; ++i) {
      const double x = values[i * stride];
      if (x != x) continue;
      ++totals[0];
      if (x < low_) {
        ++totals[1];
      } else if (x >= high_) {
        ++totals[2];
      } else {
        ++counts_[std::min(static_cast<std::size_t>((x - low_) * scale_), counts_.size() - 1)];
      }
    }
  } else {
    // A histogram without a range has low_ == high_: every value lies outside.
    const double last = counts_.empty() ? 0.0 : static_cast<double>(counts_.size() - 1);
    constexpr std::size_t block = 64;
    std::int32_t bin[block];
    for (std::size_t i = 0; i < n; i += block) {
      const std::size_t m = std::min(block, n - i);
      if (stride == 1) {
        find_bins<1>(values + i, m, 1, low_, high_, scale_, last, bin, totals);
      } else {
        find_bins<0>(values + i * stride, m, stride, low_, high_, scale_, last, bin, totals);
      }
      for (std::size_t k = 0; k < m; ++k) {
        if (bin[k] >= 0) ++counts_[static_cast<std::size_t>(bin[k])];
      }
    }
  }
  total_ += totals[0];
  below_ += totals[1];
  above_ += totals[2];
}

Histogram Histogram::from_counts(double low, double high, std::vector<std::uint64_t> counts,
                                 std::uint64_t below, std::uint64_t above, std::uint64_t total) {
  Histogram h(low, high, counts.size());
  std::uint64_t sum = below + above;
  for (std::uint64_t c : counts) sum += c;
  if (sum != total) throw Error("histogram counts do not add up to their total");
  h.counts_ = std::move(counts);
  h.below_ = below;
  h.above_ = above;
  h.total_ = total;
  return h;
}

void Histogram::merge(const Histogram& other) {
  if (other.total_ == 0 && other.counts_.empty()) return;
  if (counts_.empty() && total_ == 0) {
    *this = other;
    return;
  }
  if (other.low_ != low_ || other.high_ != high_ || other.counts_.size() != counts_.size()) {
    throw Error("histograms of different ranges cannot be merged");
  }
  for (std::size_t i = 0; i < counts_.size(); ++i) counts_[i] += other.counts_[i];
  below_ += other.below_;
  above_ += other.above_;
  total_ += other.total_;
}

double Histogram::quantile(double p) const {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  if (!(p >= 0.0 && p <= 1.0) || total_ == 0 || counts_.empty()) return nan;
  const double target = p * static_cast<double>(total_);
  double cumulative = static_cast<double>(below_);
  if (target < cumulative || (below_ > 0 && target == cumulative && p > 0.0)) return nan;
  const double width = (high_ - low_) / static_cast<double>(counts_.size());
  for (std::size_t i = 0; i < counts_.size(); ++i) {
    const double c = static_cast<double>(counts_[i]);
    if (c > 0.0 && cumulative + c >= target) {
      return low_ + width * (static_cast<double>(i) + (target - cumulative) / c);
    }
    cumulative += c;
  }
  return nan;
}

Interval Histogram::coverage_interval(double coverage) const {
  return Interval{quantile(0.5 * (1.0 - coverage)), quantile(0.5 * (1.0 + coverage))};
}

Histogram Histogram::coarsened(std::size_t max_bins) const {
  std::size_t first = counts_.size(), last = 0;
  for (std::size_t i = 0; i < counts_.size(); ++i) {
    if (counts_[i] == 0) continue;
    first = std::min(first, i);
    last = i;
  }
  if (first > last || max_bins == 0) return Histogram();
  const std::size_t span = last - first + 1;
  const std::size_t group = (span + max_bins - 1) / max_bins;
  const std::size_t bins = (span + group - 1) / group;
  const double width = (high_ - low_) / static_cast<double>(counts_.size());
  const double low = low_ + width * static_cast<double>(first);
  const double high = low_ + width * static_cast<double>(first + bins * group);
  Histogram out(low, high, bins);
  for (std::size_t i = first; i <= last; ++i) out.counts_[(i - first) / group] += counts_[i];
  out.below_ = below_;  // the bins before `first` are empty
  out.above_ = above_;
  out.total_ = total_;
  return out;
}

}  // namespace lotwise
