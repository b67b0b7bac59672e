// Temperature: coefficients move values linearly from the reference temperature; a sweep
// evaluates every build at each temperature; a range draws one per build.
#include <algorithm>
#include <cmath>
#include <vector>

#include <boost/math/distributions/normal.hpp>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

// A 1 A current source into RX: V(n) = RX.
Design probe_design(const Variation& v, const Temperature& t) {
  Design d;
  d.circuit = resistor_probes({"RX"}, 1000.0);
  d.variations = {v};
  d.measurements = {measure("v", Kind::node_voltage, {}, {"nRX"})};
  d.temperature = t;
  return d;
}

YieldResult run(const Study& s, std::uint64_t n, std::uint64_t seed, bool keep = true) {
  RunOptions o;
  o.samples = n;
  o.seed = seed;
  o.threads = 2;
  o.keep_samples = keep;
  return s.run(o);
}

}  // namespace

TEST_CASE("resistor TCR: R(T) = R(T0) (1 + alpha (T - T0))", "[fast][temperature]") {
  // source: definition of the TCR, alpha = (R(T) - R(T0)) / (R(T0) (T - T0)), in ppm/K
  // (IEC 60115-1 uses T0 = 20 degC; lotwise's default reference is 25 degC; from memory)
  Variation v({"RX"}, Distribution::fixed);
  v.tempco = 100e-6;
  Temperature t;
  t.operating = {-40.0, 25.0, 85.0, 125.0};
  const Study s(probe_design(v, t));
  const YieldResult r = run(s, 10, 1);
  REQUIRE(r.temperatures.size() == 4);
  REQUIRE(r.values.size() == 10 * 4);
  for (std::size_t q = 0; q < 4; ++q) {
    const double expected = 1000.0 * (1.0 + 100e-6 * (t.operating[q] - 25.0));
    CAPTURE(t.operating[q]);
    CHECK_THAT(r.values[q], close_rel(expected, 1e-14));
    CHECK(r.temperatures[q].temperature == t.operating[q]);
    CHECK_THAT(r.temperatures[q].measurements[0].stats.mean(), close_rel(expected, 1e-14));
  }
  CHECK_THAT(r.values[0], close_rel(993.5, 1e-14));
  CHECK_THAT(r.values[3], close_rel(1010.0, 1e-14));

  SECTION("another reference temperature") {
    Temperature t20 = t;
    t20.reference = 20.0;
    const Study s20(probe_design(v, t20));
    const YieldResult r20 = run(s20, 4, 1);
    CHECK_THAT(r20.values[1], close_rel(1000.0 * (1.0 + 100e-6 * 5.0), 1e-14));
  }
}

TEST_CASE("a sweep gives the yield per temperature and across the range", "[slow][temperature]") {
  // 0.3 % at 3 sigma (1 ohm) and 100 ppm/K; spec 996 to 1007 ohm.
  Variation v({"RX"}, Distribution::normal, 0.003, true, 3.0);
  v.tempco = 100e-6;
  Temperature t;
  t.operating = {-40.0, 25.0, 85.0};
  Design d = probe_design(v, t);
  d.specs = {Spec{"v", 996.0, 1007.0}};
  const Study s(std::move(d));
  const std::uint64_t n = 20000;
  const YieldResult r = run(s, n, 301);
  REQUIRE(r.temperatures.size() == 3);
  // At T the value is (1000 + d)(1 + alpha (T - 25)) with d ~ N(0, 1 ohm).
  // source: Boost.Math normal distribution function
  const boost::math::normal_distribution<double> unit;
  for (std::size_t q = 0; q < 3; ++q) {
    const double scale = 1.0 + 100e-6 * (t.operating[q] - 25.0);
    const double p = cdf(unit, 1007.0 / scale - 1000.0) - cdf(unit, 996.0 / scale - 1000.0);
    const TemperatureResult& at = r.temperatures[q];
    CAPTURE(t.operating[q], p, at.yield);
    CHECK(std::abs(at.yield - p) <= 4.0 * std::sqrt(p * (1 - p) / n) + 1.0 / n);
    CHECK(at.specs[0].passed == at.passed);
  }
  // -40 degC needs d >= 2.52, 85 degC needs d <= 0.99: no build passes both.
  CHECK(r.passed == 0);
  // The build-level pass flag is the AND over its temperatures.
  std::uint64_t all = 0;
  for (std::uint64_t i = 0; i < n; ++i) {
    bool ok = true;
    for (std::size_t q = 0; q < 3; ++q) {
      const double value = r.values[i * 3 + q];
      ok = ok && value >= 996.0 && value <= 1007.0;
    }
    all += ok;
    CHECK(r.pass[i] == ok);
  }
  CHECK(all == r.passed);
  // Pooled statistics count every evaluation.
  CHECK(r.measurements[0].stats.count() == 3 * n);
}

TEST_CASE("offset drift spread: uniform coefficient, offset grows with temperature", "[slow][temperature]") {
  // A follower with its input grounded outputs its offset: no initial offset, a drift
  // anywhere in +-5 uV/K. At 125 degC the offset is uniform within +-500 uV.
  Design d;
  d.circuit.add_opamp("U1", "gnd", "out", "out", OpAmpSpec{});
  d.circuit.add_resistor("RL", "out", "gnd", 10e3);
  Variation drift({"U1.offset"}, Distribution::fixed);
  drift.relative = false;
  drift.tempco_relative = false;
  drift.tempco_tolerance = 5e-6;
  d.variations = {drift};
  d.measurements = {measure("vo", Kind::node_voltage, {}, {"out"})};
  d.temperature.operating = {125.0};
  const Study s(std::move(d));
  const YieldResult r = run(s, 20000, 302);
  std::vector<double> xs = r.values;
  std::sort(xs.begin(), xs.end());
  CHECK(xs.front() >= -500e-6 * (1 + 1e-12));
  CHECK(xs.back() <= 500e-6 * (1 + 1e-12));
  // source: rectangular law on +-500 uV (a coefficient uniform within its bound times 100 K)
  CHECK(ks_sorted(xs, [](double x) { return std::clamp((x + 500e-6) / 1000e-6, 0.0, 1.0); }) <
        ks_critical_1pct(xs.size()));
}

TEST_CASE("coefficients on A0 and gain-bandwidth move the closed-loop response", "[fast][temperature]") {
  // Non-inverting gain 10 on a single-pole op-amp: f_3dB = f_b (1 + A0 beta) is linear in
  // GBW = A0 f_b, so -0.5 %/K on GBW gives 70 % of the bandwidth at 85 degC.
  // source: single-pole closed-loop bandwidth (Sedra & Smith ch. 2; references.md)
  Design d;
  d.circuit = non_inverting(1e3, 9e3, single_pole_opamp(1e5, 1e6));
  Variation gbw({"U1.gain_bandwidth"}, Distribution::fixed);
  gbw.tempco = -0.005;
  Variation a0({"U1.open_loop_gain"}, Distribution::fixed);
  a0.tempco = -0.002;
  d.variations = {gbw, a0};
  d.measurements = {measure("bw", Kind::bandwidth, {"VIN"}, {"out"}),
                    measure("g", Kind::gain, {"VIN"}, {"out"})};
  d.temperature.operating = {25.0, 85.0};
  const Study s(std::move(d));
  const YieldResult r = run(s, 2, 303);
  // Evaluation rows: build 0 at 25 degC, build 0 at 85 degC.
  const double bw25 = r.values[0], bw85 = r.values[2];
  const double gbw85 = 1e6 * 0.7, a085 = 1e5 * (1 - 0.12);
  const double fb = gbw85 / a085, beta = 0.1;
  CHECK_THAT(bw85, close_rel(fb * (1 + a085 * beta), 1e-6));
  CHECK_THAT(bw25, close_rel(1e6 / 1e5 * (1 + 1e5 * beta), 1e-6));
  // DC gain with A0 = 88000: G = 10 / (1 + 10 / A0).
  CHECK_THAT(r.values[3], close_rel(10.0 / (1.0 + 10.0 / a085), 1e-12));
}

TEST_CASE("a temperature range draws one temperature per build", "[slow][temperature]") {
  // 100 ppm/K over a uniform -40..85 degC: the value is uniform on 993.5..1006 ohm.
  Variation v({"RX"}, Distribution::fixed);
  v.tempco = 100e-6;
  Temperature t;
  t.drawn = true;
  t.low = -40.0;
  t.high = 85.0;
  const Study s(probe_design(v, t));
  CHECK(s.coordinate_names() == std::vector<std::string>{"temperature"});
  const YieldResult r = run(s, 20000, 304);
  CHECK(r.temperatures.empty());
  std::vector<double> xs = r.values;
  std::sort(xs.begin(), xs.end());
  // source: a linear map of a uniform temperature is uniform
  CHECK(ks_sorted(xs, [](double x) { return std::clamp((x - 993.5) / 12.5, 0.0, 1.0); }) <
        ks_critical_1pct(xs.size()));
}

TEST_CASE("matched network: coefficients track within the tracking", "[fast][temperature]") {
  // 25 ppm/K +- 25 ppm/K shared by the network, members within 2 ppm/K of each other.
  Variation network({"RN*"}, Distribution::normal, 0.001);
  network.ratio_tolerance = 0.0001;
  network.tempco = 25e-6;
  network.tempco_tolerance = 25e-6;
  network.tempco_tracking = 2e-6;
  const Circuit c = resistor_probes({"RN1", "RN2"}, 10e3);
  Temperature t;
  t.operating = {125.0};
  const auto at25 = draw(c, {network}, {"RN1", "RN2"}, 4096, 305, Sampler::monte_carlo, {}, t, 25.0);
  const auto at125 = draw(c, {network}, {"RN1", "RN2"}, 4096, 305, Sampler::monte_carlo, {}, t, 125.0);
  double largest = 0.0, spread = 0.0;
  for (std::size_t i = 0; i < 4096; ++i) {
    const double drift = (at125.columns[0][i] / at125.columns[1][i]) /
                         (at25.columns[0][i] / at25.columns[1][i]) - 1.0;
    largest = std::max(largest, std::abs(drift));
    spread = std::max(spread, std::abs(at125.columns[0][i] / at25.columns[0][i] - 1.0 - 25e-6 * 100));
  }
  // The ratio drifts by at most the tracking times 100 K (to first order), while each
  // member's own drift spreads by the full +-25 ppm/K.
  CHECK(largest <= 2e-6 * 100 * 1.01);
  CHECK(largest > 2e-6 * 100 * 0.5);
  CHECK(spread > 20e-6 * 100);
}

TEST_CASE("temperature settings are checked", "[fast][temperature]") {
  Temperature t;
  t.drawn = true;
  t.low = 85.0;
  t.high = -40.0;
  const Variation v({"RX"}, Distribution::fixed);
  CHECK_THROWS_WITH(Study(probe_design(v, t)), Catch::Contains("low < high"));
  t.low = -40.0;
  t.high = 85.0;
  t.operating = {25.0};
  CHECK_THROWS_WITH(Study(probe_design(v, t)), Catch::Contains("not both"));
  Temperature cold;
  cold.operating = {-300.0};
  CHECK_THROWS_WITH(Study(probe_design(v, cold)), Catch::Contains("above -273.15"));
  Variation zero({"RX"}, Distribution::fixed);
  zero.tempco = std::nan("");
  CHECK_THROWS_WITH(Study(probe_design(zero, {})), Catch::Contains("tempco must be a finite"));
}
