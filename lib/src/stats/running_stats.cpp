#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>

#include "lotwise/statistics.hpp"

namespace lotwise {

void RunningStats::add(double x) {
  if (!std::isfinite(x)) {
    ++non_finite_;
    if (!std::isnan(x)) {
      min_ = x < min_ ? x : min_;
      max_ = x > max_ ? x : max_;
    }
    return;
  }
  ++count_;
  const double delta = x - mean_;
  mean_ += delta / static_cast<double>(count_);
  m2_ += delta * (x - mean_);
  min_ = x < min_ ? x : min_;
  max_ = x > max_ ? x : max_;
}

namespace {

// of() on K columns side by side: per column the same operations in the same order.
template <std::size_t K>
void of_columns(const double* const* columns, std::size_t n, RunningStats::State* out) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  double sum[K], low[K], high[K], mean[K], m2[K];
  std::uint64_t count[K], non_finite[K];
  for (std::size_t c = 0; c < K; ++c) {
    sum[c] = 0.0;
    m2[c] = 0.0;
    low[c] = inf;
    high[c] = -inf;
    count[c] = 0;
    non_finite[c] = 0;
  }
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t c = 0; c < K; ++c) {
      const double x = columns[c][i];
      if (!std::isfinite(x)) {
        ++non_finite[c];
        if (std::isnan(x)) continue;
      } else {
        ++count[c];
        sum[c] += x;
      }
      low[c] = x < low[c] ? x : low[c];
      high[c] = x > high[c] ? x : high[c];
    }
  }
  bool any = false;
  for (std::size_t c = 0; c < K; ++c) {
    mean[c] = count[c] > 0 ? sum[c] / static_cast<double>(count[c]) : 0.0;
    any = any || count[c] > 0;
  }
  for (std::size_t i = 0; i < n && any; ++i) {
    for (std::size_t c = 0; c < K; ++c) {
      const double x = columns[c][i];
      if (std::isfinite(x)) m2[c] += (x - mean[c]) * (x - mean[c]);
    }
  }
  for (std::size_t c = 0; c < K; ++c) {
    out[c] = RunningStats::State{count[c], non_finite[c], mean[c], m2[c], low[c], high[c]};
  }
}

}  // namespace

RunningStats RunningStats::of(const double* values, std::size_t n) {
  // Two passes: the sum, least and greatest values; then the centred squares.
  State st;
  of_columns<1>(&values, n, &st);
  return from_state(st);
}

void RunningStats::of_each(const double* const* columns, std::size_t k, std::size_t n,
                           RunningStats* out) {
  State st[3];
  for (std::size_t c = 0; c < k;) {
    const std::size_t group = std::min<std::size_t>(3, k - c);
    switch (group) {
      case 3: of_columns<3>(columns + c, n, st); break;
      case 2: of_columns<2>(columns + c, n, st); break;
      default: of_columns<1>(columns + c, n, st); break;
    }
    for (std::size_t g = 0; g < group; ++g) out[c + g] = from_state(st[g]);
    c += group;
  }
}

void RunningStats::merge(const RunningStats& other) {
  non_finite_ += other.non_finite_;
  min_ = other.min_ < min_ ? other.min_ : min_;
  max_ = other.max_ > max_ ? other.max_ : max_;
  if (other.count_ == 0) return;
  if (count_ == 0) {
    count_ = other.count_;
    mean_ = other.mean_;
    m2_ = other.m2_;
    return;
  }
  const double n_a = static_cast<double>(count_);
  const double n_b = static_cast<double>(other.count_);
  const double n = n_a + n_b;
  const double delta = other.mean_ - mean_;
  mean_ += delta * n_b / n;
  m2_ += other.m2_ + delta * delta * n_a * n_b / n;
  count_ += other.count_;
}

double RunningStats::mean() const {
  return count_ == 0 ? std::numeric_limits<double>::quiet_NaN() : mean_;
}

double RunningStats::std_dev() const {
  return count_ < 2 ? std::numeric_limits<double>::quiet_NaN()
                    : std::sqrt(m2_ / static_cast<double>(count_ - 1));
}

}  // namespace lotwise
