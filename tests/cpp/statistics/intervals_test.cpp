// Binomial intervals of a yield: Clopper-Pearson, Wilson, Jeffreys, and the one-sided
// zero-failure bound.
#include <cmath>

#include "test_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("Clopper-Pearson and Wilson equal scipy's binomtest", "[fast][intervals]") {
  struct Case {
    std::uint64_t k, n;
    double cp_low, cp_high, w_low, w_high;
  };
  // source: scipy.stats.binomtest(k, n).proportion_ci(0.95, method='exact' / 'wilson');
  // 7/50 exact is printed in scipy's documentation; the others are in
  // /work/shared/references.md [computed] and were recomputed with scipy 1.x here.
  const Case cases[] = {
      {7, 50, 0.05819170033997342, 0.26739600249700846, 0.0695083342701629, 0.261861937105855},
      {0, 100, 0.0, 0.0362166926451905, 0.0, 0.0369934982069857},
      {50, 1000, 0.0373353976046606, 0.0653904879154937, 0.0381302623927488, 0.0653138202442508},
      {999, 1000, 0.99444107572015, 0.999974682512508, 0.994357441402042, 0.999823453629374},
  };
  for (const Case& c : cases) {
    CAPTURE(c.k, c.n);
    const Interval cp = binomial_interval(IntervalMethod::clopper_pearson, c.k, c.n, 0.95);
    const Interval w = binomial_interval(IntervalMethod::wilson, c.k, c.n, 0.95);
    CHECK_THAT(cp.low, close_abs(c.cp_low, 1e-10));
    CHECK_THAT(cp.high, close_abs(c.cp_high, 1e-10));
    CHECK_THAT(w.low, close_abs(c.w_low, 1e-10));
    CHECK_THAT(w.high, close_abs(c.w_high, 1e-10));
  }
}

TEST_CASE("Jeffreys interval is the equal-tailed Beta(k+1/2, n-k+1/2) interval", "[fast][intervals]") {
  // source: scipy.stats.beta.ppf([a/2, 1-a/2], k + 0.5, n - k + 0.5), computed here, with
  // the Brown, Cai & DasGupta (Statist. Sci. 16(2), 2001) ends: 0 at k = 0, 1 at k = n.
  struct Case {
    std::uint64_t k, n;
    double confidence, low, high;
  };
  const Case cases[] = {
      {7, 50, 0.95, 0.0648717011505185, 0.255325028156392},
      {7, 50, 0.90, 0.0748267193344742, 0.235117615215101},
      {0, 100, 0.95, 0.0, 0.0247452700152699},
      {50, 1000, 0.95, 0.0377701322542748, 0.0648284557331478},
      {999, 1000, 0.95, 0.995335541191209, 0.999892081195319},
      {100, 100, 0.95, 0.97525472998473, 1.0},
  };
  for (const Case& c : cases) {
    CAPTURE(c.k, c.n, c.confidence);
    const Interval j = jeffreys(c.k, c.n, c.confidence);
    CHECK_THAT(j.low, close_abs(c.low, 1e-10));
    CHECK_THAT(j.high, close_abs(c.high, 1e-10));
  }
}

TEST_CASE("zero failures: the one-sided bound is the rule of three", "[fast][intervals]") {
  // source: /work/shared/references.md (zero failures: upper bound 1 - alpha^(1/n), about
  // 3/n at 95 %); scipy.stats.binomtest(0, 1000, alternative='less').proportion_ci(0.95)
  // gives 0.0029912495452490 (its root finder agrees to 2e-13).
  CHECK_THAT(clopper_pearson_upper(0, 1000, 0.95), close_rel(1.0 - std::pow(0.05, 1e-3), 1e-13));
  CHECK_THAT(clopper_pearson_upper(0, 1000, 0.95), close_abs(0.0029912495452490, 1e-12));
  for (const std::uint64_t n : {300u, 1000u, 100000u}) {
    CAPTURE(n);
    const double bound = clopper_pearson_upper(0, n, 0.95);
    // Rule of three: n times the bound is -ln(0.05) = 2.996 less at most ln(0.05)^2 / (2n).
    const double scaled = bound * static_cast<double>(n);
    CHECK(scaled <= -std::log(0.05));
    CHECK(scaled >= -std::log(0.05) - 4.5 / static_cast<double>(n));
    CHECK_THAT(scaled, close_abs(3.0, 0.02));
  }
  // The same bound from a run: n passing builds, zero failures.
  // source: /work/shared/references.md, n = ln(1 - C)/ln(P): 598 runs give 99.5 % at 95 %.
  CHECK(clopper_pearson_upper(0, 598, 0.95) <= 0.005);
  CHECK(clopper_pearson_upper(0, 597, 0.95) > 0.005);
  // With failures the bound is the upper beta quantile at the full confidence level,
  // which is the upper end of the two-sided interval at 2 C - 1.
  CHECK_THAT(clopper_pearson_upper(7, 50, 0.975), close_rel(clopper_pearson(7, 50, 0.95).high, 1e-12));
}

TEST_CASE("a run reports all three intervals and the failure bound", "[intervals]") {
  // A circuit with no spread passes every build: zero failures in n.
  Circuit c;
  c.add_voltage_source("V1", "a", "gnd", 1.0);
  c.add_resistor("R1", "a", "gnd", 1e3);
  Design d;
  d.circuit = c;
  Measurement m;
  m.name = "v";
  m.kind = MeasurementKind::node_voltage;
  m.output = {"a"};
  d.measurements = {m};
  Spec spec;
  spec.measurement = "v";
  spec.min = 0.5;
  d.specs = {spec};
  const Study study(d);
  RunOptions o;
  o.samples = 2000;
  o.threads = 1;
  const YieldResult r = study.run(o);
  REQUIRE(r.passed == 2000);
  CHECK_THAT(r.interval.high, close_abs(1.0, 0.0));
  CHECK_THAT(r.wilson_interval.low, close_rel(wilson(2000, 2000).low, 1e-15));
  CHECK_THAT(r.jeffreys_interval.low, close_rel(jeffreys(2000, 2000).low, 1e-15));
  CHECK_THAT(r.failure_upper_bound, close_rel(1.0 - std::pow(0.05, 1.0 / 2000.0), 1e-12));
  CHECK_THAT(r.specs[0].jeffreys_interval.low, close_rel(r.jeffreys_interval.low, 1e-15));
}
