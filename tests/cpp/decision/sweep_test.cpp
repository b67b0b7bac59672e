// The saturating DC transfer sweep on circuits whose curves are known in closed form.
#include <algorithm>
#include <cmath>
#include <vector>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Catch::Contains;

namespace {

std::vector<double> grid(double from, double to, double step) {
  std::vector<double> v;
  const int n = static_cast<int>(std::lround((to - from) / step));
  for (int i = 0; i <= n; ++i) v.push_back(from + step * i);
  return v;
}

}  // namespace

TEST_CASE("sweep of an inverting Schmitt trigger follows its hysteresis loop", "[fast][sweep]") {
  // source: common practice (+-11 V output, 1k/10k divider: thresholds +-1 V).
  const Circuit c = inverting_schmitt(1e3, 10e3, limited(-11.0, 11.0));
  const Network n(c);
  const auto curve = dc_sweep(n, nominal(c), "VIN", {"out"}, grid(-3.0, 3.0, 0.125));
  REQUIRE(curve.points.size() == 2 * 49);
  REQUIRE(curve.opamps == std::vector<std::string>{"U1"});
  for (std::size_t i = 0; i < curve.points.size(); ++i) {
    const SweepPoint& p = curve.points[i];
    INFO("step " << i << " input " << p.input);
    const bool up = p.direction == SweepDirection::up;
    CHECK(up == (i < 49));
    // Going up the output stays high until the input passes +1 V; going down it stays
    // low until the input passes -1 V.
    const bool high = up ? p.input <= 1.0 : p.input < -1.0;
    CHECK(p.output == (high ? 11.0 : -11.0));
    CHECK(curve.state(i, 0) == (high ? OutputState::high : OutputState::low));
  }
}

TEST_CASE("sweep of a non-inverting Schmitt trigger with finite gain", "[fast][sweep]") {
  // 10k / 50k, L = +-10 V, A0 = 1e4: thresholds near -(R1/R2) L = +-2 V (Sedra & Smith,
  // from memory), moved by the input A0 needs to hold a limit.
  const double a0 = 1e4;
  const Circuit c =
      non_inverting_schmitt(10e3, 50e3, limited(-10.0, 10.0, OpAmpModel::finite_gain, a0));
  const Network n(c);
  const auto curve = dc_sweep(n, nominal(c), "VIN", {"out"}, grid(-4.0, 4.0, 0.01));
  // The output leaves L where e = (s R2 + L R1)/(R1 + R2) = L/A0 (derived):
  // s = L (R1 + R2)/(R2 A0) - L R1/R2, with (R1 + R2)/R2 = 1.2 and R1/R2 = 0.2.
  const double rise_exact = -10.0 * 1.2 / a0 + 10.0 * 0.2;
  const double fall_exact = 10.0 * 1.2 / a0 - 10.0 * 0.2;
  std::size_t switches = 0;
  for (std::size_t i = 1; i < curve.points.size(); ++i) {
    if (curve.state(i, 0) == curve.state(i - 1, 0)) continue;
    ++switches;
    const SweepPoint& p = curve.points[i];
    const SweepPoint& q = curve.points[i - 1];
    if (p.direction == SweepDirection::up) {
      CHECK(curve.state(i, 0) == OutputState::high);
      CHECK((q.input < rise_exact && rise_exact <= p.input));
    } else {
      CHECK(curve.state(i, 0) == OutputState::low);
      CHECK((p.input <= fall_exact && fall_exact < q.input));
    }
  }
  CHECK(switches == 2);  // a regenerative switch: straight from one limit to the other
}

TEST_CASE("sweep of a follower clips at its limits", "[fast][sweep]") {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  OpAmpSpec amp;
  amp.supply_high = 5.0;
  amp.supply_low = 0.0;
  amp.headroom_high = 0.8;
  amp.headroom_low = 0.05;
  c.add_opamp("U1", "in", "out", "out", amp);
  c.add_resistor("RL", "out", "gnd", 2e3);
  const Network n(c);
  const auto curve = dc_transfer(n, nominal(c), "VIN", {"out"}, {-1.0, 0.02, 2.0, 4.5, 3.0, -0.5});
  const std::vector<double> expected{0.05, 0.05, 2.0, 4.2, 3.0, 0.05};
  for (std::size_t i = 0; i < expected.size(); ++i) {
    CHECK_THAT(curve.points[i].output, close_abs(expected[i], 1e-12));
  }
  CHECK(curve.state(0, 0) == OutputState::low);
  CHECK(curve.state(2, 0) == OutputState::linear);
  CHECK(curve.state(3, 0) == OutputState::high);
  CHECK(curve.points[4].direction == SweepDirection::down);
}

TEST_CASE("sweep of an open-loop finite-gain comparator passes through its linear range",
          "[fast][sweep]") {
  const double a0 = 1e3;
  const Circuit c = comparator(10e3, 10e3, 5.0, limited(0.0, 5.0, OpAmpModel::finite_gain, a0));
  const Network n(c);
  // Inside the range the output is A0 (VIN - 2.5 V).
  const auto curve = dc_transfer(n, nominal(c), "VIN", {"out"}, {2.0, 2.501, 2.503, 2.504, 3.0});
  CHECK(curve.points[0].output == 0.0);
  CHECK_THAT(curve.points[1].output, close_rel(1.0, 1e-9));
  CHECK_THAT(curve.points[2].output, close_rel(3.0, 1e-9));
  CHECK(curve.state(2, 0) == OutputState::linear);
  CHECK(curve.points[4].output == 5.0);
}

TEST_CASE("sweep of a window comparator: two deciding op-amps", "[fast][sweep]") {
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_voltage_source("VHI", "hi", "gnd", 3.0);
  c.add_voltage_source("VLO", "lo", "gnd", 1.0);
  c.add_opamp("U1", "in", "hi", "over", limited(0.0, 5.0));
  c.add_opamp("U2", "lo", "in", "under", limited(0.0, 5.0));
  c.add_resistor("R1", "over", "gnd", 10e3);
  c.add_resistor("R2", "under", "gnd", 10e3);
  const Network n(c);
  const auto curve = dc_sweep(n, nominal(c), "VIN", {"over"}, {0.0, 0.5, 1.5, 2.5, 3.5, 4.0});
  for (std::size_t i = 0; i < curve.points.size(); ++i) {
    const double v = curve.points[i].input;
    INFO("input " << v);
    CHECK(curve.state(i, 0) == (v > 3.0 ? OutputState::high : OutputState::low));
    CHECK(curve.state(i, 1) == (v < 1.0 ? OutputState::high : OutputState::low));
  }
}

TEST_CASE("the sweep reports what it cannot do", "[fast][sweep]") {
  // An ideal comparator without limits has no state at all.
  const Circuit c = comparator(10e3, 10e3, 5.0, OpAmpSpec{});
  const Network n(c);
  CHECK_THROWS_WITH(dc_sweep(n, nominal(c), "VIN", {"out"}, {0.0, 1.0}),
                    Contains("singular") && Contains("no negative feedback"));
  const Circuit d = comparator(10e3, 10e3, 5.0, limited(0.0, 5.0));
  const Network m(d);
  CHECK_THROWS_WITH(dc_sweep(m, nominal(d), "R1", {"out"}, {0.0}),
                    Contains("not an independent source"));
  CHECK_THROWS_WITH(dc_sweep(m, nominal(d), "VIN", {"nowhere"}, {0.0}), Contains("no node called"));
  CHECK_THROWS_WITH(dc_sweep(m, nominal(d), "VIN", {"out"}, {1.0, 0.0}), Contains("ascending"));
  // A study's sweep uses its nominal values.
  const Study s = make_study(d, thresholds("VIN", "U1"));
  const auto curve = dc_sweep(s, "VIN", {"out"}, {0.0, 5.0});
  CHECK(curve.points[1].output == 5.0);
  CHECK(curve.points[3].output == 0.0);
}
