// The measurements' natural logarithm (numeric/natural_log.hpp) against the C library's
// long double logl, and side by side against one at a time, bit for bit.
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <random>
#include <vector>

#include <catch2/catch.hpp>

#include "numeric/natural_log.hpp"

using lotwise::detail::natural_log;
using lotwise::detail::natural_log_each;

namespace {

double from_bits(std::uint64_t b) {
  double x;
  std::memcpy(&x, &b, sizeof x);
  return x;
}

std::uint64_t bits_of(double x) {
  std::uint64_t b;
  std::memcpy(&b, &x, sizeof b);
  return b;
}

// The error of natural_log(x) in units in the last place of the double nearest log(x).
// Reference: the C library's logl on x86-64's 64-bit-significand long double, eleven bits
// more than a double holds, so its own error is under 1/2000 of a double's last place.
double ulp_error(double x) {
  const long double exact = std::log(static_cast<long double>(x));
  const double nearest = static_cast<double>(exact);
  const double ulp = std::nextafter(std::fabs(nearest), std::numeric_limits<double>::infinity()) -
                     std::fabs(nearest);
  return static_cast<double>(std::fabs(static_cast<long double>(natural_log(x)) - exact) /
                             static_cast<long double>(ulp));
}

double worst_ulp_error(const std::vector<double>& xs) {
  double worst = 0.0;
  for (const double x : xs) {
    if (x == 1.0) continue;  // log 1 = 0 exactly, checked on its own
    worst = std::max(worst, ulp_error(x));
  }
  return worst;
}

}  // namespace

TEST_CASE("the measurements' logarithm is within one unit in the last place of logl",
          "[natural_log]") {
  if (std::numeric_limits<long double>::digits < 64) {
    WARN("long double is no wider than double here: no reference to check against");
    return;
  }
  std::mt19937_64 engine(20261203);
  std::vector<double> xs;
  // Every positive normal double, by uniform bit patterns (so uniform in the exponent).
  std::uniform_int_distribution<std::uint64_t> any_bits(bits_of(std::numeric_limits<double>::min()),
                                                        bits_of(std::numeric_limits<double>::max()));
  for (int i = 0; i < 400000; ++i) xs.push_back(from_bits(any_bits(engine)));
  // One octave either side of 1, where the reduction leaves k = 0 or -1.
  std::uniform_real_distribution<double> octaves(0.5, 2.0);
  for (int i = 0; i < 400000; ++i) xs.push_back(octaves(engine));
  // Close to 1, where log x is small and its relative error shows.
  std::uniform_real_distribution<double> near_one(-0x1.0p-20, 0x1.0p-20);
  for (int i = 0; i < 200000; ++i) xs.push_back(1.0 + near_one(engine));
  // The ratios a CMRR takes: 1 to 10^8 (0 to 160 dB), uniform in decibels.
  std::uniform_real_distribution<double> decibels(0.0, 160.0);
  for (int i = 0; i < 400000; ++i) xs.push_back(std::pow(10.0, decibels(engine) / 20.0));
  // The ends of the reduction's interval and the powers of two.
  for (int k = -1022; k <= 1023; ++k) {
    const double p = std::ldexp(1.0, k);
    xs.push_back(p);
    xs.push_back(std::ldexp(0.70710678118654752, k));
    xs.push_back(std::ldexp(1.41421356237309505, k));
  }
  xs.push_back(std::numeric_limits<double>::max());
  const double worst = worst_ulp_error(xs);
  INFO("worst error " << worst << " ulp over " << xs.size() << " values");
  CHECK(worst < 1.0);
}

TEST_CASE("the measurements' logarithm gives the C library's answer outside the normal range",
          "[natural_log]") {
  constexpr double inf = std::numeric_limits<double>::infinity();
  CHECK(natural_log(1.0) == 0.0);
  CHECK(!std::signbit(natural_log(1.0)));
  CHECK(natural_log(0.0) == -inf);
  CHECK(natural_log(-0.0) == -inf);
  CHECK(std::isnan(natural_log(-1.0)));
  CHECK(std::isnan(natural_log(-inf)));
  CHECK(natural_log(inf) == inf);
  CHECK(std::isnan(natural_log(std::numeric_limits<double>::quiet_NaN())));
  const double subnormal = std::numeric_limits<double>::denorm_min();
  CHECK(natural_log(subnormal) == std::log(subnormal));
  CHECK(natural_log(0.5 * std::numeric_limits<double>::min()) ==
        std::log(0.5 * std::numeric_limits<double>::min()));
}

TEST_CASE("the measurements' logarithm side by side has the bits of one at a time",
          "[natural_log]") {
  std::mt19937_64 engine(7);
  std::uniform_real_distribution<double> decibels(-40.0, 200.0);
  constexpr double inf = std::numeric_limits<double>::infinity();
  const double specials[] = {0.0, -0.0, -2.0, inf, std::numeric_limits<double>::quiet_NaN(),
                             std::numeric_limits<double>::denorm_min(), 1.0,
                             std::numeric_limits<double>::min(), std::numeric_limits<double>::max()};
  for (std::size_t count = 0; count <= 16; ++count) {
    for (int trial = 0; trial < 200; ++trial) {
      double x[16], side_by_side[16];
      for (std::size_t i = 0; i < count; ++i) {
        x[i] = engine() % 8 == 0 ? specials[engine() % 9] : std::pow(10.0, decibels(engine) / 20.0);
      }
      natural_log_each(x, side_by_side, count);
      for (std::size_t i = 0; i < count; ++i) {
        const double one = natural_log(x[i]);
        INFO("x = " << x[i] << ", " << count << " side by side");
        CHECK(std::memcmp(&one, &side_by_side[i], sizeof one) == 0);
      }
    }
  }
}
