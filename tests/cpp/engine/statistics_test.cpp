// Binomial intervals against published and Boost-computed values; running moments.
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <random>
#include <vector>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("Clopper-Pearson interval against published values", "[fast][statistics]") {
  // source: scipy.stats.binomtest docs, binomtest(k=7, n=50).proportion_ci() (exact)
  const Interval a = clopper_pearson(7, 50, 0.95);
  CHECK_THAT(a.low, close_rel(0.05819170033997342, 1e-10));
  CHECK_THAT(a.high, close_rel(0.26739600249700846, 1e-10));

  // source: /work/shared/references.md [computed, Boost], 95 % two-sided
  const Interval b = clopper_pearson(0, 100, 0.95);
  CHECK(b.low == 0.0);
  CHECK_THAT(b.high, close_abs(0.0362166927, 1e-10));
  const Interval c = clopper_pearson(50, 1000, 0.95);
  CHECK_THAT(c.low, close_abs(0.0373353976, 1e-10));
  CHECK_THAT(c.high, close_abs(0.0653904879, 1e-10));
  const Interval d = clopper_pearson(999, 1000, 0.95);
  CHECK_THAT(d.low, close_abs(0.9944410757, 1e-10));
  CHECK_THAT(d.high, close_abs(0.9999746825, 1e-10));
}

TEST_CASE("Clopper-Pearson bounds with no failures", "[fast][statistics]") {
  for (std::uint64_t n : {1u, 10u, 100u, 598u, 100000u}) {
    for (double conf : {0.90, 0.95, 0.99}) {
      CAPTURE(n, conf);
      const double alpha = 1.0 - conf;
      const double nd = static_cast<double>(n);
      // source: Clopper & Pearson, Biometrika 26(4), 1934: at k = 0 the upper bound solves
      // (1 - p)^n = alpha/2, so p = 1 - (alpha/2)^(1/n); mirrored at k = n.
      const Interval none = clopper_pearson(0, n, conf);
      CHECK(none.low == 0.0);
      CHECK_THAT(none.high, close_rel(1.0 - std::pow(alpha / 2.0, 1.0 / nd), 1e-11));
      const Interval all = clopper_pearson(n, n, conf);
      CHECK(all.high == 1.0);
      CHECK_THAT(all.low, close_rel(std::pow(alpha / 2.0, 1.0 / nd), 1e-11));
    }
  }
  // source: /work/shared/references.md [computed]: zero-failure run count
  // n = ln(1 - C)/ln(P): 99.5 % yield at 95 % confidence needs 598 passing runs. The
  // one-sided 95 % lower bound is the two-sided 90 % one.
  CHECK(clopper_pearson(598, 598, 0.90).low >= 0.995);
  CHECK(clopper_pearson(597, 597, 0.90).low < 0.995);
  // source: /work/shared/references.md [published]: one-sided bound 1 - alpha^(1/n),
  // close to the rule of three, 3/n, at 95 %.
  CHECK_THAT(clopper_pearson(0, 1000, 0.90).high, close_rel(1.0 - std::pow(0.05, 1e-3), 1e-11));
  CHECK_THAT(clopper_pearson(0, 1000, 0.90).high, close_rel(3.0 / 1000.0, 0.01));
}

TEST_CASE("Wilson score interval against computed values", "[fast][statistics]") {
  // source: /work/shared/references.md [computed, Boost], 95 %
  const Interval a = wilson(0, 100, 0.95);
  CHECK(a.low == 0.0);
  CHECK_THAT(a.high, close_abs(0.0369934982, 1e-10));
  const Interval b = wilson(50, 1000, 0.95);
  CHECK_THAT(b.low, close_abs(0.0381302624, 1e-10));
  CHECK_THAT(b.high, close_abs(0.0653138202, 1e-10));
  // Swapping successes and failures mirrors the interval (Wilson, JASA 22, 1927).
  const Interval m = wilson(950, 1000, 0.95);
  CHECK_THAT(m.low, close_rel(1.0 - b.high, 1e-12));
  CHECK_THAT(m.high, close_rel(1.0 - b.low, 1e-12));
}

TEST_CASE("binomial intervals refuse meaningless input", "[fast][statistics]") {
  CHECK_THROWS_AS(clopper_pearson(0, 0), Error);
  CHECK_THROWS_AS(clopper_pearson(5, 4), Error);
  CHECK_THROWS_AS(clopper_pearson(1, 4, 1.0), Error);
  CHECK_THROWS_AS(wilson(1, 4, 0.0), Error);
}

TEST_CASE("RunningStats merged in chunks equals one pass", "[fast][statistics]") {
  // A large offset against a small spread: the naive sum-of-squares formula would lose
  // most digits here; Welford and Chan et al. keep them.
  std::mt19937_64 rng(7);
  std::normal_distribution<double> noise(0.0, 1.0);
  std::vector<double> xs(10007);
  for (double& x : xs) x = 1e6 + 0.25 * noise(rng);

  RunningStats one;
  for (double x : xs) one.add(x);

  RunningStats merged;
  std::size_t i = 0;
  for (std::size_t len = 1; i < xs.size(); len = len * 3 % 997 + 1) {
    RunningStats part;
    for (std::size_t end = std::min(xs.size(), i + len); i < end; ++i) part.add(xs[i]);
    merged.merge(part);
  }
  merged.merge(RunningStats{});  // merging an empty set changes nothing

  // Two-pass reference in long double.
  long double sum = 0;
  for (double x : xs) sum += x;
  const long double mean = sum / xs.size();
  long double ss = 0;
  for (double x : xs) ss += (x - mean) * (x - mean);
  const double sd = static_cast<double>(std::sqrt(ss / (xs.size() - 1)));

  CHECK(merged.count() == xs.size());
  CHECK(one.count() == xs.size());
  CHECK(merged.min() == *std::min_element(xs.begin(), xs.end()));
  CHECK(merged.max() == *std::max_element(xs.begin(), xs.end()));
  CHECK(merged.min() == one.min());
  CHECK(merged.max() == one.max());
  CHECK_THAT(merged.mean(), close_rel(one.mean(), 1e-14));
  CHECK_THAT(merged.std_dev(), close_rel(one.std_dev(), 1e-9));
  CHECK_THAT(one.mean(), close_rel(static_cast<double>(mean), 1e-14));
  CHECK_THAT(one.std_dev(), close_rel(sd, 1e-9));
  CHECK_THAT(merged.std_dev(), close_rel(sd, 1e-9));

  SECTION("empty into full and full into empty") {
    RunningStats empty;
    empty.merge(one);
    CHECK(empty.count() == one.count());
    CHECK(empty.mean() == one.mean());
    CHECK(empty.std_dev() == one.std_dev());
  }
}

TEST_CASE("RunningStats of a block agrees with one value at a time", "[fast][statistics]") {
  // Common textbook example (from memory): 2, 4, 4, 4, 5, 5, 7, 9 has mean 5 and
  // population standard deviation 2, so the sample standard deviation is sqrt(32 / 7).
  const std::vector<double> textbook = {2, 4, 4, 4, 5, 5, 7, 9};
  const RunningStats t = RunningStats::of(textbook.data(), textbook.size());
  CHECK(t.count() == 8);
  CHECK(t.mean() == 5.0);
  CHECK_THAT(t.std_dev(), close_rel(std::sqrt(32.0 / 7.0), 1e-15));
  CHECK(t.min() == 2.0);
  CHECK(t.max() == 9.0);
  // Random values with NaN and infinities mixed in: the same counts and extremes as add(),
  // and the same moments to rounding.
  std::mt19937_64 rng(99);
  std::normal_distribution<double> normal(1e3, 2.0);
  std::vector<double> values;
  RunningStats one_by_one;
  for (int i = 0; i < 5000; ++i) {
    double x = normal(rng);
    if (i % 997 == 5) x = std::numeric_limits<double>::quiet_NaN();
    if (i % 1201 == 7) x = (i % 2 ? 1.0 : -1.0) * std::numeric_limits<double>::infinity();
    values.push_back(x);
    one_by_one.add(x);
  }
  const RunningStats block = RunningStats::of(values.data(), values.size());
  CHECK(block.count() == one_by_one.count());
  CHECK(block.non_finite() == one_by_one.non_finite());
  CHECK(block.min() == one_by_one.min());
  CHECK(block.max() == one_by_one.max());
  CHECK_THAT(block.mean(), close_rel(one_by_one.mean(), 1e-14));
  CHECK_THAT(block.std_dev(), close_rel(one_by_one.std_dev(), 1e-12));
  const RunningStats none = RunningStats::of(values.data(), 0);
  CHECK(none.count() == 0);
  CHECK(std::isnan(none.mean()));
}

TEST_CASE("RunningStats of columns side by side is of() on each, bit for bit", "[fast][statistics]") {
  // Seven columns (groups of three, three and one): finite ones, one with NaN and
  // infinities, one all NaN (no finite value), one of constant values.
  std::mt19937_64 rng(5);
  std::normal_distribution<double> normal(-3.0, 0.25);
  constexpr std::size_t n = 1500;
  std::vector<std::vector<double>> columns(7, std::vector<double>(n));
  for (std::size_t i = 0; i < n; ++i) {
    for (auto& column : columns) column[i] = normal(rng);
    if (i % 101 == 3) columns[1][i] = std::numeric_limits<double>::quiet_NaN();
    if (i % 211 == 9) columns[1][i] = -std::numeric_limits<double>::infinity();
    columns[4][i] = std::numeric_limits<double>::quiet_NaN();
    columns[6][i] = 0.1;
  }
  for (std::size_t k = 1; k <= columns.size(); ++k) {
    std::vector<const double*> pointers;
    for (std::size_t c = 0; c < k; ++c) pointers.push_back(columns[c].data());
    std::vector<RunningStats> each(k);
    RunningStats::of_each(pointers.data(), k, n, each.data());
    for (std::size_t c = 0; c < k; ++c) {
      INFO("k " << k << ", column " << c);
      const RunningStats::State want = RunningStats::of(columns[c].data(), n).state();
      const RunningStats::State got = each[c].state();
      CHECK(got.count == want.count);
      CHECK(got.non_finite == want.non_finite);
      CHECK(std::memcmp(&got.mean, &want.mean, sizeof got.mean) == 0);
      CHECK(std::memcmp(&got.m2, &want.m2, sizeof got.m2) == 0);
      CHECK(std::memcmp(&got.min, &want.min, sizeof got.min) == 0);
      CHECK(std::memcmp(&got.max, &want.max, sizeof got.max) == 0);
    }
  }
}

TEST_CASE("RunningStats keeps non-finite values apart", "[fast][statistics]") {
  RunningStats s;
  CHECK(std::isnan(s.mean()));
  s.add(1.0);
  CHECK(std::isnan(s.std_dev()));  // undefined below two values
  s.add(std::numeric_limits<double>::quiet_NaN());
  s.add(3.0);
  s.add(std::numeric_limits<double>::infinity());
  CHECK(s.count() == 2);
  CHECK(s.non_finite() == 2);
  CHECK(s.mean() == 2.0);
  CHECK_THAT(s.std_dev(), close_rel(std::sqrt(2.0), 1e-15));
  RunningStats t;
  t.add(-std::numeric_limits<double>::infinity());
  s.merge(t);
  CHECK(s.non_finite() == 3);
  CHECK(s.count() == 2);
  CHECK(s.mean() == 2.0);
}
