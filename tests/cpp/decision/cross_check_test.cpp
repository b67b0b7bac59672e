// The trip-point analysis against the saturating sweep on randomly drawn decision
// circuits: two different routes to the same switching points. The trip-point analysis
// solves for each threshold as the root of an affine function; the sweep steps the
// source and settles the op-amp states at every step. Near each computed threshold the
// sweep steps by 0.25 uV, so agreement within 1 uV is a real test.
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "decision_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

enum class Shape { inverting_schmitt, non_inverting_schmitt, comparator, buffered_reference };

struct Drawn {
  Circuit circuit;
  std::string description;
};

class Draw {
 public:
  explicit Draw(std::uint64_t seed) : engine_(seed) {}
  double uniform(double lo, double hi) {
    return std::uniform_real_distribution<double>(lo, hi)(engine_);
  }
  double log_uniform(double lo, double hi) { return std::exp(uniform(std::log(lo), std::log(hi))); }
  bool coin() { return uniform(0.0, 1.0) < 0.5; }

  // Random output limits (split supplies or a single supply, by levels or supply and
  // headroom), a random model and offset and bias currents.
  OpAmpSpec amp() {
    OpAmpSpec s;
    const double pick = uniform(0.0, 1.0);
    s.model = pick < 0.4 ? OpAmpModel::ideal : pick < 0.7 ? OpAmpModel::finite_gain
                                                          : OpAmpModel::single_pole;
    s.open_loop_gain = log_uniform(1e4, 1e6);
    s.gain_bandwidth = log_uniform(1e5, 1e7);
    s.offset = uniform(-5e-3, 5e-3);
    s.bias_plus = uniform(-50e-9, 50e-9);
    s.bias_minus = uniform(-50e-9, 50e-9);
    const bool split = coin();
    if (coin()) {
      s.output_high = uniform(2.0, 14.0);
      s.output_low = split ? -uniform(2.0, 14.0) : uniform(0.0, 0.4);
    } else {
      s.supply_high = uniform(3.0, 15.0);
      s.supply_low = split ? -uniform(3.0, 15.0) : 0.0;
      s.headroom_high = uniform(0.0, 1.5);
      s.headroom_low = uniform(0.0, 1.5);
    }
    return s;
  }

  Drawn circuit(Shape shape) {
    Drawn d;
    Circuit& c = d.circuit;
    const OpAmpSpec u1 = amp();
    const double r1 = log_uniform(1e3, 100e3);
    const double r2 = r1 * log_uniform(2.0, 100.0);  // positive feedback well above 1/A0
    c.add_voltage_source("VIN", "in", "gnd", 0.0);
    switch (shape) {
      case Shape::inverting_schmitt:
        c.add_voltage_source("VREF", "ref", "gnd", uniform(-2.0, 2.0));
        c.add_resistor("RIN", "in", "m", log_uniform(1e3, 100e3));
        c.add_resistor("R1", "p", "ref", r1);
        c.add_resistor("R2", "out", "p", r2);
        c.add_opamp("U1", "p", "m", "out", u1);
        d.description = "inverting Schmitt trigger";
        break;
      case Shape::non_inverting_schmitt:
        c.add_voltage_source("VREF", "vr", "gnd", uniform(-2.0, 2.0));
        c.add_resistor("RREF", "vr", "ref", log_uniform(1e3, 100e3));
        c.add_resistor("R1", "in", "p", r1);
        c.add_resistor("R2", "out", "p", r2);
        c.add_opamp("U1", "p", "ref", "out", u1);
        d.description = "non-inverting Schmitt trigger";
        break;
      case Shape::comparator: {
        c.add_voltage_source("VS", "vs", "gnd", uniform(1.0, 12.0));
        c.add_resistor("RA", "vs", "ref", log_uniform(1e3, 100e3));
        c.add_resistor("RB", "ref", "gnd", log_uniform(1e3, 100e3));
        if (coin()) c.add_opamp("U1", "in", "ref", "out", u1);
        else c.add_opamp("U1", "ref", "in", "out", u1);
        d.description = "open-loop comparator";
        break;
      }
      case Shape::buffered_reference: {
        // A linear follower U2 with wide limits drives the reference of a Schmitt trigger.
        c.add_voltage_source("VS", "vs", "gnd", uniform(1.0, 5.0));
        c.add_resistor("RA", "vs", "div", log_uniform(1e3, 100e3));
        c.add_resistor("RB", "div", "gnd", log_uniform(1e3, 100e3));
        OpAmpSpec follower;
        follower.model = coin() ? OpAmpModel::ideal : OpAmpModel::finite_gain;
        follower.offset = uniform(-2e-3, 2e-3);
        follower.output_high = 20.0;
        follower.output_low = -20.0;
        c.add_opamp("U2", "div", "ref", "ref", follower);
        if (coin()) {
          c.add_resistor("R1", "p", "ref", r1);
          c.add_resistor("R2", "out", "p", r2);
          c.add_opamp("U1", "p", "in", "out", u1);
          d.description = "inverting Schmitt trigger, buffered reference";
        } else {
          c.add_resistor("R1", "in", "p", r1);
          c.add_resistor("R2", "out", "p", r2);
          c.add_opamp("U1", "p", "ref", "out", u1);
          d.description = "non-inverting Schmitt trigger, buffered reference";
        }
        break;
      }
    }
    return d;
  }

 private:
  std::mt19937_64 engine_;
};

// A path from `low` to `high` that steps by 0.25 uV within +-5 uV of `fine`.
void append_path(std::vector<double>& path, double low, double high, double fine) {
  const double coarse = 0.05, step = 0.25e-6;
  const double sign = high > low ? 1.0 : -1.0;
  const double near_start = fine - sign * 5e-6;
  for (double v = low; sign * (near_start - v) > 0.0; v += sign * coarse) path.push_back(v);
  for (int i = 0; i <= 40; ++i) path.push_back(near_start + sign * step * i);
  for (double v = fine + sign * (5e-6 + coarse); sign * (high - v) > 0.0; v += sign * coarse) {
    path.push_back(v);
  }
  path.push_back(high);
}

// Index of the first step in [from, to) where op-amp 0 of the curve changes state.
std::size_t first_switch(const TransferCurve& curve, std::size_t u1, std::size_t from,
                         std::size_t to) {
  for (std::size_t i = from + 1; i < to; ++i) {
    if (curve.state(i, u1) != curve.state(i - 1, u1)) return i;
  }
  return to;
}

}  // namespace

TEST_CASE("trip points agree with the saturating sweep within 1 uV on 120 random circuits",
          "[sweep][cross_check]") {
  Draw draw(20260714);
  const Shape shapes[] = {Shape::inverting_schmitt, Shape::non_inverting_schmitt,
                          Shape::comparator, Shape::buffered_reference};
  int checked = 0;
  for (int k = 0; k < 120; ++k) {
    const Drawn d = draw.circuit(shapes[k % 4]);
    INFO("circuit " << k << ": " << d.description);
    const Study s =
        make_study(d.circuit, {trip("rise", MeasurementKind::rising_threshold, "VIN", "U1"),
                               trip("fall", MeasurementKind::falling_threshold, "VIN", "U1")});
    const double rise = nominal_value(s, "rise");
    const double fall = nominal_value(s, "fall");
    INFO("rising " << rise << " V, falling " << fall << " V");
    REQUIRE(std::isfinite(rise));
    REQUIRE(std::isfinite(fall));
    const double low = std::min(rise, fall) - 2.0;
    const double high = std::max(rise, fall) + 2.0;
    std::vector<double> path;
    append_path(path, low, high, rise);
    const std::size_t top = path.size();
    append_path(path, high, low, fall);
    const TransferCurve curve =
        dc_transfer(s.network(), s.nominal_parameters(), "VIN", {"out"}, path);
    std::size_t u1 = 0;
    while (curve.opamps[u1] != "U1") ++u1;

    // Going up, the first switch brackets the rising threshold; going down, the falling.
    const std::size_t up = first_switch(curve, u1, 0, top);
    REQUIRE(up < top);
    CHECK(std::abs(curve.points[up].input - rise) <= 1e-6);
    CHECK(std::abs(curve.points[up - 1].input - rise) <= 1e-6);
    const std::size_t down = first_switch(curve, u1, top, path.size());
    REQUIRE(down < path.size());
    CHECK(std::abs(curve.points[down].input - fall) <= 1e-6);
    CHECK(std::abs(curve.points[down - 1].input - fall) <= 1e-6);
    // The sweep's states before each switch are the ones the analysis assumed: low before
    // a rising crossing when the input pushes the output up, high when it pushes it down.
    const bool rises_high = curve.state(up - 1, u1) == OutputState::low;
    CHECK(curve.state(up - 1, u1) != OutputState::linear);
    CHECK(curve.state(down - 1, u1) ==
          (rises_high ? OutputState::high : OutputState::low));
    // The buffered reference stays linear throughout.
    for (std::size_t j = 0; j < curve.opamps.size(); ++j) {
      if (j == u1) continue;
      for (std::size_t i = 0; i < curve.points.size(); ++i) {
        CHECK(curve.state(i, j) == OutputState::linear);
      }
    }
    ++checked;
  }
  CHECK(checked == 120);
}
