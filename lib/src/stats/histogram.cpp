#include "lotwise/histogram.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "lotwise/error.hpp"

namespace lotwise {

Histogram::Histogram(double low, double high, std::size_t bins)
    : low_(low), high_(high), counts_(bins, 0) {
  if (!(std::isfinite(low) && std::isfinite(high) && low < high) || bins == 0) {
    throw Error("a histogram needs a finite range low < high and at least one bin");
  }
  scale_ = static_cast<double>(bins) / (high - low);
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
