// The MNA engine against an independent nodal solve written here from Kirchhoff's current
// law, and the controlled sources and reactive parts against hand-derived closed forms.
#include <cmath>
#include <complex>
#include <map>
#include <random>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

// A random resistor network with sources and op-amps, described twice: as a lotwise
// Circuit, and as plain lists from which the test writes its own equations.
struct RandomNetwork {
  static constexpr int ground = -1;
  struct Resistor { int a, b; double ohms; };
  struct CurrentSource { int from, to; double amps; };
  struct OpAmp { int plus, minus, out; bool ideal; double a0, vos, ib_plus, ib_minus; };
  int nodes = 0;
  std::vector<Resistor> resistors;
  std::vector<CurrentSource> currents;
  std::vector<OpAmp> opamps;
  int grounded_source_node = 0;   // V(node) = grounded_volts
  double grounded_volts = 0.0;
  bool has_floating = false;      // V(float_a) - V(float_b) = floating_volts
  int float_a = 0, float_b = 0;
  double floating_volts = 0.0;
  Circuit circuit;
};

std::string node_name(int n) { return n == RandomNetwork::ground ? "gnd" : "n" + std::to_string(n); }

RandomNetwork make_random_network(std::mt19937_64& rng) {
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  auto log_uniform = [&](double lo, double hi) {
    return lo * std::pow(hi / lo, unit(rng));
  };
  auto pick = [&](int lo, int hi) {  // inclusive
    return std::uniform_int_distribution<int>(lo, hi)(rng);
  };
  RandomNetwork net;
  net.nodes = pick(5, 9);
  const int amps = pick(1, 2);
  // Node 0: grounded source; nodes 1..amps: op-amp outputs; the rest are ordinary.
  net.grounded_source_node = 0;
  net.grounded_volts = 10.0 * unit(rng) - 5.0;
  net.has_floating = net.nodes - amps - 1 >= 2 && unit(rng) < 0.6;
  if (net.has_floating) {
    net.float_a = amps + 1;
    net.float_b = pick(amps + 2, net.nodes - 1);
    net.floating_volts = 4.0 * unit(rng) - 2.0;
  }
  // A spanning tree of resistors gives every node a DC path; extra ones make meshes.
  for (int i = 1; i < net.nodes; ++i) {
    net.resistors.push_back({i, pick(-1, i - 1), log_uniform(1e3, 1e5)});
  }
  const int extra = pick(2, net.nodes);
  for (int k = 0; k < extra; ++k) {
    const int a = pick(-1, net.nodes - 1);
    int b = pick(-1, net.nodes - 1);
    if (a == b) b = a == -1 ? 0 : -1;
    net.resistors.push_back({a, b, log_uniform(1e3, 1e5)});
  }
  const int sources = pick(1, 2);
  for (int k = 0; k < sources; ++k) {
    const int from = pick(-1, net.nodes - 1);
    int to = pick(-1, net.nodes - 1);
    if (to == from) to = from == -1 ? net.nodes - 1 : -1;
    net.currents.push_back({from, to, 2e-3 * unit(rng) - 1e-3});
  }
  for (int k = 0; k < amps; ++k) {
    RandomNetwork::OpAmp u;
    u.plus = pick(-1, net.nodes - 1);
    u.minus = pick(-1, net.nodes - 1);
    if (u.minus == u.plus) u.minus = u.plus == -1 ? 1 + k : -1;
    u.out = 1 + k;
    u.ideal = unit(rng) < 0.5;
    u.a0 = log_uniform(10.0, 1e4);
    u.vos = 20e-3 * unit(rng) - 10e-3;
    u.ib_plus = 2e-6 * unit(rng) - 1e-6;
    u.ib_minus = 2e-6 * unit(rng) - 1e-6;
    net.opamps.push_back(u);
  }

  Circuit& c = net.circuit;
  c.add_voltage_source("VS", node_name(net.grounded_source_node), "gnd", net.grounded_volts);
  if (net.has_floating) {
    c.add_voltage_source("VF", node_name(net.float_a), node_name(net.float_b),
                         net.floating_volts);
  }
  for (std::size_t k = 0; k < net.resistors.size(); ++k) {
    const auto& r = net.resistors[k];
    c.add_resistor("R" + std::to_string(k), node_name(r.a), node_name(r.b), r.ohms);
  }
  for (std::size_t k = 0; k < net.currents.size(); ++k) {
    const auto& i = net.currents[k];
    c.add_current_source("I" + std::to_string(k), node_name(i.from), node_name(i.to), i.amps);
  }
  for (std::size_t k = 0; k < net.opamps.size(); ++k) {
    const auto& u = net.opamps[k];
    OpAmpSpec spec;
    spec.model = u.ideal ? OpAmpModel::ideal : OpAmpModel::finite_gain;
    spec.open_loop_gain = u.a0;
    spec.offset = u.vos;
    spec.bias_plus = u.ib_plus;
    spec.bias_minus = u.ib_minus;
    c.add_opamp("U" + std::to_string(k), node_name(u.plus), node_name(u.minus),
                node_name(u.out), spec);
  }
  return net;
}

// Node-voltage equations written from first principles. Row n starts as Kirchhoff's
// current law at node n, "sum of currents leaving n = 0"; a node whose voltage a source
// or an op-amp output sets gets that constraint instead (the source's current is
// unknown), and a floating source's two nodes form a supernode.
struct NodalSystem {
  Eigen::MatrixXd a;
  Eigen::VectorXd b;
};

NodalSystem nodal_equations(const RandomNetwork& net) {
  const int n = net.nodes;
  // Leaving-current of node i: g.row(i) . v + c(i).
  Eigen::MatrixXd g = Eigen::MatrixXd::Zero(n, n);
  Eigen::VectorXd c = Eigen::VectorXd::Zero(n);
  for (const auto& r : net.resistors) {
    const double y = 1.0 / r.ohms;
    if (r.a >= 0) {
      g(r.a, r.a) += y;
      if (r.b >= 0) g(r.a, r.b) -= y;
    }
    if (r.b >= 0) {
      g(r.b, r.b) += y;
      if (r.a >= 0) g(r.b, r.a) -= y;
    }
  }
  for (const auto& i : net.currents) {
    if (i.from >= 0) c(i.from) += i.amps;  // leaves `from` into the source
    if (i.to >= 0) c(i.to) -= i.amps;
  }
  for (const auto& u : net.opamps) {
    if (u.plus >= 0) c(u.plus) += u.ib_plus;  // bias current flows into the input
    if (u.minus >= 0) c(u.minus) += u.ib_minus;
  }
  NodalSystem s{g, -c};
  auto set_row = [&](int row) {
    s.a.row(row).setZero();
    s.b(row) = 0.0;
  };
  // Op-amp outputs: V+ + Vos - V- = Vout/A0 (ideal: = 0).
  for (const auto& u : net.opamps) {
    set_row(u.out);
    if (u.plus >= 0) s.a(u.out, u.plus) += 1.0;
    if (u.minus >= 0) s.a(u.out, u.minus) -= 1.0;
    if (!u.ideal) s.a(u.out, u.out) -= 1.0 / u.a0;
    s.b(u.out) = -u.vos;
  }
  set_row(net.grounded_source_node);
  s.a(net.grounded_source_node, net.grounded_source_node) = 1.0;
  s.b(net.grounded_source_node) = net.grounded_volts;
  if (net.has_floating) {
    s.a.row(net.float_a) = g.row(net.float_a) + g.row(net.float_b);
    s.b(net.float_a) = -(c(net.float_a) + c(net.float_b));
    set_row(net.float_b);
    s.a(net.float_b, net.float_a) = 1.0;
    s.a(net.float_b, net.float_b) = -1.0;
    s.b(net.float_b) = net.floating_volts;
  }
  return s;
}

// 2-norm condition number after scaling each row to unit size.
double scaled_condition(Eigen::MatrixXd a) {
  for (Eigen::Index i = 0; i < a.rows(); ++i) a.row(i) /= a.row(i).norm();
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(a);
  const auto& sv = svd.singularValues();
  return sv(0) / sv(sv.size() - 1);
}

}  // namespace

TEST_CASE("random networks match an independent nodal solve", "[fast][nodal]") {
  std::mt19937_64 rng(20240611);
  int checked = 0, ideal_amps = 0, finite_amps = 0, floating = 0;
  for (int attempt = 0; attempt < 200 && checked < 12; ++attempt) {
    RandomNetwork net = make_random_network(rng);
    const NodalSystem sys = nodal_equations(net);
    // Random op-amp wiring can be (nearly) singular; such draws test nothing here.
    if (!(scaled_condition(sys.a) < 1e6)) continue;
    const Eigen::VectorXd want = sys.a.fullPivLu().solve(sys.b);
    const Network network(net.circuit);
    const std::vector<double> got = network.operating_point(nominal(net.circuit));
    const auto& names = net.circuit.nodes();
    REQUIRE(got.size() == static_cast<std::size_t>(net.nodes));
    const double scale = want.cwiseAbs().maxCoeff();
    REQUIRE(scale > 1e-3);  // the sources drive volts, not rounding noise
    for (int i = 0; i < net.nodes; ++i) {
      std::size_t k = 0;
      while (k < names.size() && names[k] != node_name(i)) ++k;
      REQUIRE(k < names.size());
      CAPTURE(attempt, i);
      // Relative to each node's own voltage, or to the network's largest for a node
      // that sits near zero.
      CHECK(std::abs(got[k] - want(i)) <= 1e-9 * std::max(std::abs(want(i)), 1e-3 * scale));
    }
    ++checked;
    floating += net.has_floating;
    for (const auto& u : net.opamps) (u.ideal ? ideal_amps : finite_amps) += 1;
  }
  // The check is only worth something if it saw enough varied networks.
  CHECK(checked >= 8);
  CHECK(ideal_amps >= 3);
  CHECK(finite_amps >= 3);
  CHECK(floating >= 2);
}

namespace {

double voltage(const Circuit& c, const std::vector<double>& v, const std::string& node) {
  const auto& names = c.nodes();
  for (std::size_t i = 0; i < names.size(); ++i) {
    if (names[i] == node) return v[i];
  }
  FAIL("no node " << node);
  return 0.0;
}

}  // namespace

TEST_CASE("controlled sources against hand-derived closed forms", "[fast][nodal]") {
  const double vin = 2.0, r1 = 3e3, r2 = 7e3, rl = 4.7e3;
  SECTION("vcvs") {
    Circuit c;
    c.add_voltage_source("V1", "in", "gnd", vin);
    c.add_resistor("R1", "in", "c", r1);
    c.add_resistor("R2", "c", "gnd", r2);
    c.add_vcvs("E1", "out", "gnd", "c", "gnd", -3.5);
    c.add_resistor("RL", "out", "gnd", rl);
    // Divider then V(out) = mu V(c): the load draws from the source, not the divider.
    const auto v = Network(c).operating_point(nominal(c));
    CHECK_THAT(voltage(c, v, "out"), close_rel(-3.5 * vin * r2 / (r1 + r2), 1e-12));
  }
  SECTION("vcvs with a floating output") {
    // V(a) - V(b) = mu V(c); b is held by a resistor divider from a source.
    Circuit c;
    c.add_voltage_source("V1", "c", "gnd", 0.5);
    c.add_resistor("RC", "c", "gnd", 1e3);
    c.add_vcvs("E1", "a", "b", "c", "gnd", 4.0);
    c.add_resistor("RA", "a", "gnd", 1e3);
    c.add_resistor("RB", "b", "gnd", 3e3);
    const auto v = Network(c).operating_point(nominal(c));
    // The 2 V across E1 drives RA + RB in series: I = 2/4k, V(b) = -I RB, V(a) = I RA.
    CHECK_THAT(voltage(c, v, "a"), close_rel(2.0 * 1e3 / 4e3, 1e-12));
    CHECK_THAT(voltage(c, v, "b"), close_rel(-2.0 * 3e3 / 4e3, 1e-12));
  }
  SECTION("vccs") {
    const double gm = 2.5e-3;
    Circuit c;
    c.add_voltage_source("V1", "in", "gnd", vin);
    c.add_resistor("R1", "in", "c", r1);
    c.add_resistor("R2", "c", "gnd", r2);
    // gm V(c) flows from ground through the source into `out`, then through RL.
    c.add_vccs("G1", "gnd", "out", "c", "gnd", gm);
    c.add_resistor("RL", "out", "gnd", rl);
    const auto v = Network(c).operating_point(nominal(c));
    CHECK_THAT(voltage(c, v, "out"), close_rel(gm * vin * r2 / (r1 + r2) * rl, 1e-12));
  }
  SECTION("ccvs") {
    const double rm = 1.5e3;
    Circuit c;
    c.add_voltage_source("V1", "in", "gnd", vin);
    c.add_resistor("R1", "in", "x", r1);
    c.add_voltage_source("VSENSE", "x", "gnd", 0.0);  // ammeter: I = vin/R1, plus to minus
    c.add_ccvs("H1", "out", "gnd", "VSENSE", rm);
    c.add_resistor("RL", "out", "gnd", rl);
    const auto v = Network(c).operating_point(nominal(c));
    CHECK_THAT(voltage(c, v, "out"), close_rel(rm * vin / r1, 1e-12));
  }
  SECTION("cccs") {
    const double beta = 40.0;
    Circuit c;
    c.add_voltage_source("V1", "in", "gnd", vin);
    c.add_resistor("R1", "in", "x", r1);
    c.add_voltage_source("VSENSE", "x", "gnd", 0.0);
    // beta I flows from ground through the source into `out`.
    c.add_cccs("F1", "gnd", "out", "VSENSE", beta);
    c.add_resistor("RL", "out", "gnd", rl);
    const auto v = Network(c).operating_point(nominal(c));
    CHECK_THAT(voltage(c, v, "out"), close_rel(beta * vin / r1 * rl, 1e-12));
  }
  SECTION("vccs as a negative resistance in a divider") {
    // A vccs sensing its own terminals is a conductance gm: from `a` to ground it adds
    // gm in parallel with RB. Divider: V(a) = vin RB'/(R1 + RB'), RB' = 1/(1/RB + gm).
    const double gm = -1.0 / 20e3, rb = 10e3;
    Circuit c;
    c.add_voltage_source("V1", "in", "gnd", vin);
    c.add_resistor("R1", "in", "a", r1);
    c.add_resistor("RB", "a", "gnd", rb);
    c.add_vccs("G1", "a", "gnd", "a", "gnd", gm);
    const double rb_eff = 1.0 / (1.0 / rb + gm);
    const auto v = Network(c).operating_point(nominal(c));
    CHECK_THAT(voltage(c, v, "a"), close_rel(vin * rb_eff / (r1 + rb_eff), 1e-12));
  }
}

TEST_CASE("RC low-pass magnitude and phase", "[fast][nodal]") {
  const double r = 15e3, cap = 4.7e-9, pi = 3.14159265358979323846;
  Circuit c;
  c.add_voltage_source("V1", "in", "gnd", 1.0);
  c.add_resistor("R1", "in", "out", r);
  c.add_capacitor("C1", "out", "gnd", cap);
  const Network net(c);
  const double fc = 1.0 / (2.0 * pi * r * cap);
  for (double f : {0.0, 0.01 * fc, 0.5 * fc, fc, 3.0 * fc, 100.0 * fc}) {
    const double wrc = 2.0 * pi * f * r * cap;
    const std::complex<double> h = net.transfer(nominal(c), "V1", "out", "gnd", f);
    CAPTURE(f);
    // source: first-order RC divider, H = 1/(1 + j w R C) (common practice)
    CHECK_THAT(std::abs(h), close_rel(1.0 / std::sqrt(1.0 + wrc * wrc), 1e-12));
    CHECK_THAT(std::arg(h), close_abs(-std::atan(wrc), 1e-12));
  }
  // The capacitor is open at DC: the operating point passes the source straight through.
  CHECK_THAT(Network(c).operating_point(nominal(c))[1], close_rel(1.0, 1e-15));
}

TEST_CASE("inductor shorts at DC and forms an RL high-pass", "[fast][nodal]") {
  const double r1 = 1e3, r2 = 3e3, l = 10e-3, pi = 3.14159265358979323846;
  Circuit c;
  c.add_voltage_source("V1", "in", "gnd", 8.0);
  c.add_resistor("R1", "in", "a", r1);
  c.add_inductor("L1", "a", "b", l);
  c.add_resistor("R2", "b", "gnd", r2);
  const auto v = Network(c).operating_point(nominal(c));
  // At DC the inductor is a short: V(a) = V(b) = 8 R2/(R1 + R2).
  CHECK_THAT(voltage(c, v, "a"), close_rel(8.0 * r2 / (r1 + r2), 1e-12));
  CHECK_THAT(voltage(c, v, "b"), close_rel(8.0 * r2 / (r1 + r2), 1e-12));

  Circuit hp;
  hp.add_voltage_source("V1", "in", "gnd", 1.0);
  hp.add_resistor("R1", "in", "out", r1);
  hp.add_inductor("L1", "out", "gnd", l);
  const Network net(hp);
  for (double f : {10.0, 1e3, r1 / (2.0 * pi * l), 1e6}) {
    const std::complex<double> jwl(0.0, 2.0 * pi * f * l);
    // source: first-order RL divider, H = j w L/(R + j w L) (common practice)
    const std::complex<double> want = jwl / (r1 + jwl);
    const std::complex<double> got = net.transfer(nominal(hp), "V1", "out", "gnd", f);
    CAPTURE(f);
    CHECK_THAT(std::abs(got - want), close_abs(0.0, 1e-12 * std::abs(want)));
  }
  CHECK_THAT(std::abs(net.transfer(nominal(hp), "V1", "out", "gnd", 0.0)), close_abs(0.0, 1e-15));
}

TEST_CASE("current-source drive and transfer to a node pair", "[fast][nodal]") {
  // Norton source into a bridge: transfer from a current source is a transimpedance.
  const double ra = 1e3, rb = 2e3, rc = 3e3, rd = 4e3;
  Circuit c;
  c.add_current_source("I1", "gnd", "top", 1e-3);
  c.add_resistor("RA", "top", "l", ra);
  c.add_resistor("RB", "l", "gnd", rb);
  c.add_resistor("RC", "top", "r", rc);
  c.add_resistor("RD", "r", "gnd", rd);
  // Two branches in parallel: the current splits by conductance.
  const double i_left = (rc + rd) / (ra + rb + rc + rd);
  const double want = i_left * rb - (1.0 - i_left) * rd;  // V(l) - V(r) per ampere
  CHECK_THAT(Network(c).transfer(nominal(c), "I1", "l", "r", 0.0).real(), close_rel(want, 1e-12));
}
