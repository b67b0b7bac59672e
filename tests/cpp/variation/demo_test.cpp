// The matched-network demo of docs/examples: the same difference amplifier on discrete
// resistors and on a network of the same absolute tolerance.
#include <cmath>
#include <string>

#include <boost/math/distributions/normal.hpp>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

Study example(const std::string& name) {
  return Study(load_design(std::string(LOTWISE_EXAMPLES_DIR) + "/" + name));
}

YieldResult run(const Study& study, std::uint64_t n) {
  RunOptions o;
  o.samples = n;
  o.seed = 7;
  o.threads = 2;
  return study.run(o);
}

}  // namespace

TEST_CASE("demo: a matched network lifts the CMRR yield of a difference amplifier", "[slow][demo]") {
  const std::uint64_t n = 4000;
  const YieldResult discrete = run(example("bridge_stage_discrete.toml"), n);
  const YieldResult network = run(example("bridge_stage_network.toml"), n);
  REQUIRE(discrete.temperatures.size() == 3);
  REQUIRE(network.temperatures.size() == 3);
  // At 25 degC (index 1), to first order A_cm = G/(1+G) (d1 + d4 - d2 - d3) with the
  // resistors' relative deviations d (source: references.md, difference amplifier A_cm),
  // so CMRR >= 90 dB needs |d1 + d4 - d2 - d3| <= 11 * 10^-4.5. Discrete: the sum has
  // sigma 2 * 0.1 % / 3; the network's ratios leave sigma 2 * 0.01 % / 3 / sqrt(2).
  const double limit = 11.0 * std::pow(10.0, -4.5);
  const boost::math::normal_distribution<double> unit;
  const double p_discrete = 2.0 * cdf(unit, limit / (2.0 * 0.001 / 3.0)) - 1.0;
  const SpecSummary& cmrr25 = discrete.temperatures[1].specs[1];
  REQUIRE(cmrr25.spec.measurement == "cmrr");
  CAPTURE(p_discrete, cmrr25.fraction);
  CHECK(std::abs(cmrr25.fraction - p_discrete) < 4.0 * std::sqrt(p_discrete * (1 - p_discrete) / n));
  CHECK(network.temperatures[1].specs[1].passed == n);
  // Over the temperature range the gap only widens: the network's TCRs track.
  CHECK(network.interval.low > discrete.interval.high);
  CHECK(network.yield > 0.99);
  CHECK(discrete.yield < 0.1);
}
