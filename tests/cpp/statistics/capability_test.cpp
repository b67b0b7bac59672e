// Capability indices with their confidence intervals, and the normal-fit yield.
#include <cmath>
#include <limits>

#include "test_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("Cp with its chi-square interval", "[fast][capability]") {
  // source: NIST/SEMATECH e-Handbook of Statistical Methods 6.1.6 (Cp = (USL - LSL)/(6 s));
  // example USL 62, LSL 38, n 20, s 1.75 (Montgomery, Introduction to Statistical Quality
  // Control, ch. 8): Cp 2.29, 95 % interval [1.57, 3.01]; exact [1.56495, 3.00558]
  // [computed] in /work/shared/references.md.
  const Capability c = capability(38.0, 62.0, 50.0, 1.75, 20, 0.95);
  CHECK_THAT(c.cp, close_rel(24.0 / (6.0 * 1.75), 1e-15));
  CHECK(std::round(c.cp * 100.0) / 100.0 == Approx(2.29));
  CHECK_THAT(c.cp_interval.low, close_abs(1.56495, 5e-6));
  CHECK_THAT(c.cp_interval.high, close_abs(3.00558, 5e-6));
  // Centred: Cpk = Cp.
  CHECK_THAT(c.cpk, close_rel(c.cp, 1e-15));
}

TEST_CASE("Cpk with Bissell's interval", "[fast][capability]") {
  // source: NIST/SEMATECH e-Handbook 6.1.6, Cpk = min[(USL - mean)/(3 s), (mean - LSL)/(3 s)];
  // Bissell, Applied Statistics 39(3), 1990; USL 100, LSL 90, n 30, mean 97, s 1.6 ->
  // Cpk 0.625, 95 % [0.42475, 0.82525] [computed] in /work/shared/references.md.
  const Capability c = capability(90.0, 100.0, 97.0, 1.6, 30, 0.95);
  CHECK_THAT(c.cpk, close_rel(0.625, 1e-15));
  CHECK_THAT(c.cpu, close_rel(0.625, 1e-15));
  CHECK_THAT(c.cpl, close_rel(7.0 / 4.8, 1e-15));
  CHECK_THAT(c.cpk_interval.low, close_abs(0.42475, 5e-6));
  CHECK_THAT(c.cpk_interval.high, close_abs(0.82525, 5e-6));
}

TEST_CASE("one-sided specs have no Cp", "[fast][capability]") {
  const double inf = std::numeric_limits<double>::infinity();
  const Capability upper = capability(-inf, 100.0, 97.0, 1.6, 30, 0.95);
  CHECK(std::isnan(upper.cp));
  CHECK_THAT(upper.cpk, close_rel(0.625, 1e-15));
  const Capability lower = capability(90.0, inf, 97.0, 1.6, 30, 0.95);
  CHECK_THAT(lower.cpk, close_rel(7.0 / 4.8, 1e-15));
  CHECK(std::isnan(capability(90.0, 100.0, 97.0, 0.0, 30).cpk));
}

TEST_CASE("normal-fit yield", "[fast][capability]") {
  // source: standard normal table (common practice): P(|Z| <= 3) = 0.9973002039.
  CHECK_THAT(normal_fit_yield(-3.0, 3.0, 0.0, 1.0), close_abs(0.99730020393674, 1e-12));
  const double inf = std::numeric_limits<double>::infinity();
  // One-sided, far tail kept in precision: P(Z <= 6) = 1 - 9.8659e-10.
  // 1 - yield cancels about seven digits.
  CHECK_THAT(1.0 - normal_fit_yield(-inf, 6.0, 0.0, 1.0), close_rel(9.8658764503769e-10, 1e-6));
}
