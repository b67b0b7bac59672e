// The bounded-memory histogram: quantiles and exact, order-independent merging.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <tuple>
#include <vector>

#include "test_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("histogram quantiles of an evenly spread set", "[fast][histogram]") {
  // 10000 values evenly spread over [0, 1): the p-quantile is p to within a bin.
  Histogram h(-1.0, 2.0, 3000);
  for (int i = 0; i < 10000; ++i) h.add((i + 0.5) / 10000.0);
  CHECK(h.total() == 10000);
  CHECK(h.below() == 0);
  CHECK(h.above() == 0);
  for (const double p : {0.025, 0.1, 0.5, 0.9, 0.975}) {
    CAPTURE(p);
    CHECK_THAT(h.quantile(p), close_abs(p, 1e-3));
  }
  const Interval c = h.coverage_interval(0.95);
  CHECK_THAT(c.low, close_abs(0.025, 1e-3));
  CHECK_THAT(c.high, close_abs(0.975, 1e-3));
}

TEST_CASE("histogram tails outside the range give NaN quantiles", "[fast][histogram]") {
  Histogram h(0.0, 1.0, 10);
  for (int i = 0; i < 90; ++i) h.add(0.55);
  for (int i = 0; i < 10; ++i) h.add(5.0);
  h.add(std::nan(""));  // not counted
  CHECK(h.total() == 100);
  CHECK(h.above() == 10);
  CHECK(std::isnan(h.quantile(0.95)));
  CHECK(h.quantile(0.5) >= 0.5);
  CHECK(h.quantile(0.5) <= 0.6);
}

TEST_CASE("histogram merge is exact", "[fast][histogram]") {
  Histogram a(0.0, 1.0, 64), b(0.0, 1.0, 64), whole(0.0, 1.0, 64);
  for (int i = 0; i < 1000; ++i) {
    const double x = std::fmod(i * 0.6180339887, 1.0);
    (i % 3 ? a : b).add(x);
    whole.add(x);
  }
  Histogram merged;
  merged.merge(a);
  merged.merge(b);
  CHECK(merged.counts() == whole.counts());
  CHECK(merged.quantile(0.3) == whole.quantile(0.3));
  Histogram other(0.0, 2.0, 64);
  CHECK_THROWS_AS(merged.merge(other), Error);
}

TEST_CASE("histogram adds strided values as it adds them one by one", "[fast][histogram]") {
  // Every case of add(): inside, below, at the top edge and above, infinities, NaN.
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  const std::vector<double> values = {0.5, -2.0, 1.0, 0.999999999999, nan, inf, -inf, 0.0, 0.25, 3.0};
  Histogram one(0.0, 1.0, 8), strided(0.0, 1.0, 8);
  std::vector<double> interleaved;  // each value followed by one that must not be read
  for (double x : values) {
    one.add(x);
    interleaved.push_back(x);
    interleaved.push_back(0.5);
  }
  strided.add(interleaved.data(), values.size(), 2);
  CHECK(strided.counts() == one.counts());
  CHECK(strided.below() == one.below());
  CHECK(strided.above() == one.above());
  CHECK(strided.total() == one.total());
  CHECK(one.total() == 9);  // NaN is not counted
  CHECK(one.below() == 2);
  CHECK(one.above() == 3);
}

TEST_CASE("histogram bins follow the rule floor((x - low) bins / (high - low)), the top kept",
          "[fast][histogram]") {
  // Against the rule written out here, value by value, for runs longer than add()'s
  // blocks, contiguous and strided: random values over and beyond the range, the range's
  // ends and the largest value below the top (whose bin may round up to the count and is
  // then the last), infinities and NaN.
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  std::uint64_t state = 12345;
  auto uniform = [&state] {  // a linear congruential generator (Knuth's MMIX constants)
    state = state * 6364136223846793005ull + 1442695040888963407ull;
    return static_cast<double>(state >> 11) * 0x1.0p-53;
  };
  for (const auto& [low, high, bins] : {std::tuple<double, double, std::size_t>{0.1, 0.7, 3},
                                        {-2.5, 7.25, 4096}, {100.5, 101.5, 8}}) {
    std::vector<double> values = {low, high, std::nextafter(high, low), nan, inf, -inf};
    for (int i = 0; i < 5000; ++i) {
      values.push_back(low - 0.2 * (high - low) + 1.4 * (high - low) * uniform());
    }
    std::vector<std::uint64_t> counts(bins, 0);
    std::uint64_t below = 0, above = 0, total = 0;
    const double scale = static_cast<double>(bins) / (high - low);
    for (double x : values) {
      if (std::isnan(x)) continue;
      ++total;
      if (x < low) {
        ++below;
      } else if (x >= high) {
        ++above;
      } else {
        ++counts[std::min(static_cast<std::size_t>((x - low) * scale), bins - 1)];
      }
    }
    for (std::size_t stride : {1, 3}) {
      CAPTURE(bins, stride);
      std::vector<double> spaced(values.size() * stride, 0.5 * (low + high));
      for (std::size_t i = 0; i < values.size(); ++i) spaced[i * stride] = values[i];
      Histogram h(low, high, bins);
      h.add(spaced.data(), values.size(), stride);
      CHECK(h.counts() == counts);
      CHECK(h.below() == below);
      CHECK(h.above() == above);
      CHECK(h.total() == total);
    }
  }
}
