// Builds made from shared lots (RunOptions::builds_per_lot): every build of a lot sees the
// lot's deviation, and capability splits into the within-lot Cp, Cpk and the overall Pp,
// Ppk (NIST/SEMATECH e-Handbook §6.1.6 for the indices; the within/overall split is
// common practice in process capability studies, e.g. Montgomery, Introduction to
// Statistical Quality Control, ch. 8).
#include <cmath>
#include <map>

#include "engine/engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

// One varied source read at a node: the measurement is the source's value, nominal 0 V,
// with a part deviation of standard deviation `part` and a lot deviation of `lot`.
Study source_with_lots(double part, double lot) {
  Circuit c;
  c.add_voltage_source("X1", "n1", "gnd", 0.0);
  c.add_resistor("RL", "n1", "gnd", 1e3);
  Variation v;
  v.targets = {"X1"};
  v.relative = false;
  v.tolerance = 3.0 * part;
  v.sigmas = 3.0;
  v.lot_tolerance = 3.0 * lot;
  Spec spec;
  spec.measurement = "x";
  spec.min = -6.0;
  spec.max = 6.0;
  return make_study(c, {measure("x", MeasurementKind::node_voltage, {}, {"n1"})}, {v}, {spec});
}

}  // namespace

TEST_CASE("builds of one lot share its deviation, across chunk boundaries", "[lots]") {
  // A part spread a million times below the lot's: every build of a lot sits on the lot's
  // value.
  const Study study = source_with_lots(1e-6, 1.0);
  RunOptions o;
  o.samples = 2000;
  o.seed = 3;
  o.chunk_size = 256;  // lots of 100 straddle chunks
  o.builds_per_lot = 100;
  o.keep_samples = true;
  const YieldResult r = study.run(o);
  REQUIRE(r.values.size() == 2000);
  std::map<std::uint64_t, double> lot_value;
  for (std::size_t i = 0; i < r.values.size(); ++i) {
    const auto found = lot_value.emplace(i / 100, r.values[i]);
    CHECK_THAT(r.values[i], close_abs(found.first->second, 1e-5));
  }
  REQUIRE(lot_value.size() == 20);
  CHECK(std::fabs(lot_value[0] - lot_value[1]) > 1e-3);
  CHECK_THAT(r.measurements[0].within_lot_std_dev, close_abs(1e-6, 1e-7));
  CHECK(r.measurements[0].within_lot_dof == 2000 - 20);
}

TEST_CASE("within-lot Cp and overall Pp", "[lots]") {
  const Study study = source_with_lots(1.0, 2.0);
  RunOptions o;
  o.samples = 40000;
  o.seed = 5;
  o.builds_per_lot = 100;  // 400 lots
  const YieldResult r = study.run(o);
  const SpecSummary& s = r.specs.at(0);
  // Within lots only the part spread remains: sigma 1, Cp = 12 / 6 = 2 (sampling error of
  // a pooled sd with 39600 dof: 0.4 %).
  CHECK_THAT(r.measurements[0].within_lot_std_dev, close_abs(1.0, 0.02));
  CHECK_THAT(s.within_lot_capability.cp, close_abs(2.0, 0.04));
  // Overall: sigma sqrt(1 + 4), Pp = 12 / (6 sqrt 5) = 0.894; the lot variance rests on
  // 400 lots (relative error of the sd about 3 %): margin 0.06.
  CHECK_THAT(s.capability.cp, close_abs(2.0 / std::sqrt(5.0), 0.06));
  CHECK(s.within_lot_capability.cp > s.capability.cp);
  CHECK(r.builds_per_lot == 100);
}

TEST_CASE("without builds per lot there is no within-lot capability", "[lots]") {
  const Study study = source_with_lots(1.0, 2.0);
  RunOptions o;
  o.samples = 2000;
  const YieldResult r = study.run(o);
  CHECK(std::isnan(r.specs[0].within_lot_capability.cp));
  CHECK(std::isnan(r.measurements[0].within_lot_std_dev));
  // Each build draws its own lot: the overall sigma is sqrt(5) as before.
  CHECK_THAT(r.measurements[0].stats.std_dev(), close_abs(std::sqrt(5.0), 0.1));
}
