#pragma once
// Streaming moments and binomial confidence intervals.
#include <cstdint>
#include <limits>

namespace lotwise {

/// Mean, variance, minimum and maximum in one pass (Welford), mergeable in a fixed
/// order (Chan et al.) so that chunked runs give the same bits on any thread count.
/// Non-finite values are counted apart and do not enter the moments; an infinite value
/// (a CMRR with zero common-mode gain) still sets min or max, a NaN never does.
class RunningStats {
 public:
  void add(double x);
  void merge(const RunningStats& other);
  /// The statistics of n values at once, in two passes (the mean, then the centred
  /// squares): the state add() would reach, up to rounding, with no division per value.
  static RunningStats of(const double* values, std::size_t n);
  /// of() for k columns of n values each (out[c] from columns[c]), the same bits; the
  /// columns are summed side by side, so their additions overlap.
  static void of_each(const double* const* columns, std::size_t k, std::size_t n, RunningStats* out);

  std::uint64_t count() const { return count_; }          ///< finite values
  std::uint64_t non_finite() const { return non_finite_; }  ///< +-inf and NaN values
  double mean() const;
  /// Sample standard deviation (n - 1 in the denominator); NaN below two values.
  double std_dev() const;
  double min() const { return min_; }
  double max() const { return max_; }

  /// The whole state, to carry a tally to another process (ChunkedRun) and back.
  struct State {
    std::uint64_t count = 0, non_finite = 0;
    double mean = 0.0, m2 = 0.0, min = 0.0, max = 0.0;
  };
  State state() const { return State{count_, non_finite_, mean_, m2_, min_, max_}; }
  static RunningStats from_state(const State& s) {
    RunningStats r;
    r.count_ = s.count;
    r.non_finite_ = s.non_finite;
    r.mean_ = s.mean;
    r.m2_ = s.m2;
    r.min_ = s.min;
    r.max_ = s.max;
    return r;
  }

 private:
  std::uint64_t count_ = 0;
  std::uint64_t non_finite_ = 0;
  double mean_ = 0.0;
  double m2_ = 0.0;
  double min_ = std::numeric_limits<double>::infinity();
  double max_ = -std::numeric_limits<double>::infinity();
};

struct Interval {
  double low = 0.0;
  double high = 1.0;
};

/// Exact (Clopper-Pearson) two-sided interval for a binomial proportion k / n at the
/// given confidence level, from beta quantiles (Boost.Math). n must be > 0.
Interval clopper_pearson(std::uint64_t k, std::uint64_t n, double confidence = 0.95);

/// Wilson score interval.
Interval wilson(std::uint64_t k, std::uint64_t n, double confidence = 0.95);

/// Jeffreys interval: the equal-tailed interval of the Beta(k + 1/2, n - k + 1/2)
/// posterior, with the lower bound 0 at k = 0 and the upper bound 1 at k = n (Brown, Cai &
/// DasGupta, Statist. Sci. 16(2), 2001).
Interval jeffreys(std::uint64_t k, std::uint64_t n, double confidence = 0.95);

/// One-sided exact upper confidence bound for a proportion k / n: B^-1(confidence; k + 1,
/// n - k). With k = 0 it is 1 - (1 - confidence)^(1/n), about 3/n at 95 % (the rule of
/// three); the bound on a failure fraction after n passing builds.
double clopper_pearson_upper(std::uint64_t k, std::uint64_t n, double confidence = 0.95);

/// The binomial interval methods a report can carry.
enum class IntervalMethod { clopper_pearson, wilson, jeffreys };

const char* to_string(IntervalMethod method);

/// The interval of `method`.
Interval binomial_interval(IntervalMethod method, std::uint64_t k, std::uint64_t n,
                           double confidence = 0.95);

}  // namespace lotwise
