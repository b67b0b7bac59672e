// The same seed gives the same bits on any thread count; chunk k's draws depend only on
// (seed, k).
#include <algorithm>
#include <cstdint>
#include <cstring>
#include <vector>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

std::uint64_t bits(double x) {
  std::uint64_t b;
  std::memcpy(&b, &x, sizeof b);
  return b;
}

// A difference amplifier on a single-pole op-amp with every kind of spread and specs
// that some builds fail.
Study varied_study() {
  OpAmpSpec amp = single_pole_opamp(2e5, 1e6);
  amp.bias_minus = 20e-9;
  Design d;
  d.circuit = difference_amplifier(10e3, 100e3, 10e3, 100e3, amp, 2.5, 2.5);
  d.measurements = {measure("gain", Kind::differential_gain, {"VP", "VM"}, {"out"}),
                    measure("cmrr", Kind::cmrr, {"VP", "VM"}, {"out"}),
                    measure("offset", Kind::output_offset, {"VP", "VM"}, {"out"}),
                    measure("bw", Kind::bandwidth, {"VP"}, {"out"})};
  Variation r;
  r.targets = {"R*"};
  r.tolerance = 0.01;
  Variation vos;
  vos.targets = {"U*.offset"};
  vos.relative = false;
  vos.tolerance = 1e-3;
  Variation a0;
  a0.targets = {"U*.open_loop_gain", "U*.gain_bandwidth"};
  a0.distribution = Distribution::uniform;
  a0.tolerance = 0.3;
  d.variations = {r, vos, a0};
  Spec gain{"gain", 9.95, 10.05};
  Spec cmrr{"cmrr", 60.0};
  Spec offset{"offset", -8e-3, 8e-3};
  d.specs = {gain, cmrr, offset};
  return Study(std::move(d));
}

YieldResult run(const Study& s, std::uint64_t n, std::uint64_t seed, unsigned threads) {
  RunOptions o;
  o.samples = n;
  o.seed = seed;
  o.threads = threads;
  o.chunk_size = 256;
  o.keep_samples = true;
  return s.run(o);
}

void check_identical(const YieldResult& a, const YieldResult& b) {
  CHECK(a.samples == b.samples);
  CHECK(a.passed == b.passed);
  CHECK(bits(a.yield) == bits(b.yield));
  CHECK(bits(a.interval.low) == bits(b.interval.low));
  CHECK(bits(a.interval.high) == bits(b.interval.high));
  CHECK(a.singular == b.singular);
  CHECK(a.invalid_values == b.invalid_values);
  REQUIRE(a.specs.size() == b.specs.size());
  for (std::size_t i = 0; i < a.specs.size(); ++i) CHECK(a.specs[i].passed == b.specs[i].passed);
  REQUIRE(a.measurements.size() == b.measurements.size());
  for (std::size_t i = 0; i < a.measurements.size(); ++i) {
    const RunningStats& x = a.measurements[i].stats;
    const RunningStats& y = b.measurements[i].stats;
    CAPTURE(a.measurements[i].name);
    CHECK(x.count() == y.count());
    CHECK(bits(x.mean()) == bits(y.mean()));
    CHECK(bits(x.std_dev()) == bits(y.std_dev()));
    CHECK(bits(x.min()) == bits(y.min()));
    CHECK(bits(x.max()) == bits(y.max()));
  }
  REQUIRE(a.values.size() == b.values.size());
  std::size_t differing = 0;
  for (std::size_t i = 0; i < a.values.size(); ++i) differing += bits(a.values[i]) != bits(b.values[i]);
  CHECK(differing == 0);
  CHECK(a.pass == b.pass);
}

}  // namespace

TEST_CASE("same seed, same bits on 1, 2 and 3 threads", "[slow][determinism]") {
  const Study s = varied_study();
  const YieldResult one = run(s, 3000, 42, 1);
  // The specs must bite for the comparison of pass counts to mean anything.
  REQUIRE(one.passed > 0);
  REQUIRE(one.passed < one.samples);
  CHECK(one.complete);
  CHECK(one.singular == 0);
  for (unsigned threads : {2u, 3u}) {
    CAPTURE(threads);
    check_identical(one, run(s, 3000, 42, threads));
  }

  SECTION("a different seed gives a different answer") {
    const YieldResult other = run(s, 3000, 43, 2);
    CHECK(bits(other.measurements[0].stats.mean()) != bits(one.measurements[0].stats.mean()));
    std::size_t same = 0;
    for (std::size_t i = 0; i < one.values.size(); ++i) same += one.values[i] == other.values[i];
    CHECK(same == 0);
  }
  SECTION("the first samples do not depend on how many are asked for") {
    // 3000 is not a multiple of the chunk size: the last chunk is cut short.
    const YieldResult longer = run(s, 5000, 42, 2);
    REQUIRE(longer.values.size() == 5000 * one.measurements.size());
    std::size_t differing = 0;
    for (std::size_t i = 0; i < one.values.size(); ++i) {
      differing += bits(one.values[i]) != bits(longer.values[i]);
    }
    CHECK(differing == 0);
    CHECK(std::equal(one.pass.begin(), one.pass.end(), longer.pass.begin()));
  }
}

TEST_CASE("a study with no variations reproduces its nominal values", "[fast][determinism]") {
  Design d;
  d.circuit = non_inverting(1e3, 9e3, finite_gain_opamp(1e4));
  d.measurements = {measure("g", Kind::gain, {"VIN"}, {"out"})};
  d.specs = {Spec{"g", 9.9, 10.1}};
  const Study s(std::move(d));
  RunOptions o;
  o.samples = 100;
  o.threads = 2;
  o.chunk_size = 7;
  const YieldResult r = s.run(o);
  CHECK(r.passed == 100);
  CHECK(r.yield == 1.0);
  CHECK(r.measurements[0].stats.mean() == s.nominal_values()[0]);
  CHECK(r.measurements[0].stats.std_dev() == 0.0);
  CHECK(r.interval.low == clopper_pearson(100, 100).low);
}
