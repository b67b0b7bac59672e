#include <cmath>
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

RunningStats RunningStats::of(const double* values, std::size_t n) {
  RunningStats r;
  double sum = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double x = values[i];
    if (!std::isfinite(x)) {
      ++r.non_finite_;
      if (std::isnan(x)) continue;
    } else {
      ++r.count_;
      sum += x;
    }
    r.min_ = x < r.min_ ? x : r.min_;
    r.max_ = x > r.max_ ? x : r.max_;
  }
  if (r.count_ == 0) return r;
  r.mean_ = sum / static_cast<double>(r.count_);
  double m2 = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double x = values[i];
    if (std::isfinite(x)) m2 += (x - r.mean_) * (x - r.mean_);
  }
  r.m2_ = m2;
  return r;
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
