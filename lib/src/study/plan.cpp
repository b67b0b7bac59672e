#include "study/plan.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <string>

#include <boost/math/tools/roots.hpp>

#include "mna/lane_solver.hpp"
#include "mna/layout.hpp"
#include "numeric/natural_log.hpp"

#include "lotwise/error.hpp"

namespace lotwise {

const char* to_string(MeasurementKind kind) {
  switch (kind) {
    case MeasurementKind::gain: return "gain";
    case MeasurementKind::differential_gain: return "differential_gain";
    case MeasurementKind::common_mode_gain: return "common_mode_gain";
    case MeasurementKind::cmrr: return "cmrr";
    case MeasurementKind::output_offset: return "output_offset";
    case MeasurementKind::input_offset: return "input_offset";
    case MeasurementKind::node_voltage: return "node_voltage";
    case MeasurementKind::bandwidth: return "bandwidth";
    case MeasurementKind::phase: return "phase";
    case MeasurementKind::gain_error: return "gain_error";
    case MeasurementKind::rising_threshold: return "rising_threshold";
    case MeasurementKind::falling_threshold: return "falling_threshold";
    case MeasurementKind::hysteresis: return "hysteresis";
    case MeasurementKind::threshold_centre: return "threshold_centre";
    case MeasurementKind::output_high: return "output_high";
    case MeasurementKind::output_low: return "output_low";
  }
  return "?";
}

const char* unit_of(MeasurementKind kind) {
  switch (kind) {
    case MeasurementKind::gain:
    case MeasurementKind::differential_gain:
    case MeasurementKind::common_mode_gain: return "V/V";
    case MeasurementKind::cmrr: return "dB";
    case MeasurementKind::output_offset:
    case MeasurementKind::input_offset:
    case MeasurementKind::node_voltage: return "V";
    case MeasurementKind::bandwidth: return "Hz";
    case MeasurementKind::phase: return "deg";
    case MeasurementKind::gain_error: return "";
    case MeasurementKind::rising_threshold:
    case MeasurementKind::falling_threshold:
    case MeasurementKind::hysteresis:
    case MeasurementKind::threshold_centre:
    case MeasurementKind::output_high:
    case MeasurementKind::output_low: return "V";
  }
  return "";
}

bool is_trip_point(MeasurementKind kind) {
  switch (kind) {
    case MeasurementKind::rising_threshold:
    case MeasurementKind::falling_threshold:
    case MeasurementKind::hysteresis:
    case MeasurementKind::threshold_centre:
    case MeasurementKind::output_high:
    case MeasurementKind::output_low: return true;
    default: return false;
  }
}

namespace detail {
namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();
// 20 log10(x) = (20 / ln 10) ln(x): glibc's log is several times faster than its log10.
constexpr double db_per_neper = 8.6858896380650365530;

bool same(const Excitation& a, const Excitation& b) {
  return a.sources_at_value == b.sources_at_value && a.opamp_errors == b.opamp_errors &&
         a.overrides == b.overrides && a.output_levels == b.output_levels;
}

bool is_threshold(MeasurementKind kind) {
  return is_trip_point(kind) && kind != MeasurementKind::output_high &&
         kind != MeasurementKind::output_low;
}

// Whether op-amp element `e` has a limit parameter on the given side ("high" / "low").
bool has_limit(const Circuit& c, const Element& e, const std::string& side) {
  for (const std::size_t p : e.parameters) {
    const std::string& n = c.parameters()[p].name;
    const std::string suffix = n.substr(n.find('.') + 1);
    if (suffix == "output_" + side || suffix == "supply_" + side) return true;
  }
  return false;
}

std::size_t source_index(const Circuit& circuit, const std::string& name) {
  return circuit.find_element(name);
}

// The excitation that drives the measurement's inputs with a unit signal: one input
// at 1, or two inputs at +1/2 and -1/2 (a unit differential signal).
Excitation signal_drive(const Circuit& c, const Measurement& m) {
  Excitation ex;
  ex.sources_at_value = false;
  ex.opamp_errors = false;
  if (m.inputs.size() == 1) {
    ex.overrides = {{source_index(c, m.inputs[0]), 1.0}};
  } else {
    ex.overrides = {{source_index(c, m.inputs[0]), 0.5}, {source_index(c, m.inputs[1]), -0.5}};
  }
  return ex;
}

Excitation common_drive(const Circuit& c, const Measurement& m) {
  Excitation ex;
  ex.sources_at_value = false;
  ex.opamp_errors = false;
  ex.overrides = {{source_index(c, m.inputs[0]), 1.0}, {source_index(c, m.inputs[1]), 1.0}};
  return ex;
}


class PlanBuilder {
 public:
  PlanBuilder(const Network& network, Plan& plan) : network_(network), plan_(plan) {}

  std::size_t probe(double frequency, const std::vector<std::size_t>& held, const Excitation& ex,
                    std::size_t plus, std::size_t minus) {
    std::size_t a = 0;
    while (a < plan_.analyses.size() &&
           (plan_.analyses[a].frequency != frequency || plan_.analyses[a].held != held)) {
      ++a;
    }
    if (a == plan_.analyses.size()) plan_.analyses.push_back(Analysis{frequency, held, {}});
    auto& exs = plan_.analyses[a].excitations;
    std::size_t e = 0;
    while (e < exs.size() && !same(exs[e], ex)) ++e;
    if (e == exs.size()) exs.push_back(ex);
    if (exs.size() > plan_.slots) plan_.slots = exs.size();
    for (std::size_t p = 0; p < plan_.probes.size(); ++p) {
      const Probe& q = plan_.probes[p];
      if (q.analysis == a && q.excitation == e && q.plus == plus && q.minus == minus) return p;
    }
    plan_.probes.push_back(Probe{a, e, plus, minus});
    return plan_.probes.size() - 1;
  }

 private:
  const Network& network_;
  Plan& plan_;
};

}  // namespace

void validate_measurement(const Circuit& circuit, const Measurement& m) {
  const std::string where = "measurement '" + m.name + "'";
  if (m.name.empty()) throw DesignError("a measurement needs a name");
  const bool trip = is_trip_point(m.kind);
  std::size_t lo = 0, hi = 0;
  switch (m.kind) {
    case MeasurementKind::gain:
    case MeasurementKind::bandwidth: lo = hi = 1; break;
    case MeasurementKind::differential_gain:
    case MeasurementKind::common_mode_gain:
    case MeasurementKind::cmrr: lo = hi = 2; break;
    case MeasurementKind::output_offset:
    case MeasurementKind::input_offset:
    case MeasurementKind::phase:
    case MeasurementKind::gain_error: lo = 1; hi = 2; break;
    case MeasurementKind::node_voltage: lo = hi = 0; break;
    case MeasurementKind::rising_threshold:
    case MeasurementKind::falling_threshold:
    case MeasurementKind::hysteresis:
    case MeasurementKind::threshold_centre:
    case MeasurementKind::output_high:
    case MeasurementKind::output_low: lo = hi = 1; break;
  }
  if (m.inputs.size() < lo || m.inputs.size() > hi) {
    std::string want = lo == hi ? std::to_string(lo) : std::to_string(lo) + " or " + std::to_string(hi);
    throw DesignError(where + " (" + to_string(m.kind) + ") needs " + want +
                      " input source(s), got " + std::to_string(m.inputs.size()));
  }
  for (std::size_t i = 0; i < m.inputs.size(); ++i) {
    const std::size_t e = circuit.find_element(m.inputs[i]);
    if (e == Circuit::npos) {
      throw DesignError(where + ": input '" + m.inputs[i] + "' is not an element of the circuit");
    }
    const auto kind = circuit.elements()[e].kind;
    if (kind != ElementKind::voltage_source && kind != ElementKind::current_source) {
      throw DesignError(where + ": input '" + m.inputs[i] + "' is a " + to_string(kind) +
                        ", not an independent voltage or current source");
    }
    for (std::size_t j = 0; j < i; ++j) {
      if (m.inputs[j] == m.inputs[i]) {
        throw DesignError(where + ": input '" + m.inputs[i] + "' is named twice");
      }
    }
    if (trip && kind != ElementKind::voltage_source) {
      throw DesignError(where + ": the driving input '" + m.inputs[i] +
                        "' of a trip point must be a voltage source (thresholds are in volts)");
    }
  }
  if (is_threshold(m.kind) && !m.output.empty()) {
    throw DesignError(where + ": a " + std::string(to_string(m.kind)) +
                      " takes no output; its value is a level of the driving source '" +
                      m.inputs[0] + "'");
  }
  if ((!trip && m.output.empty()) || m.output.size() > 2) {
    throw DesignError(where + ": output must be one node or a pair of nodes (plus, minus)");
  }
  for (const auto& node : m.output) {
    if (!circuit.has_node(node)) {
      throw DesignError(where + ": output node '" + node + "' is not in the circuit");
    }
  }
  if (!std::isfinite(m.frequency) || m.frequency < 0.0) {
    throw DesignError(where + ": frequency must be a finite number >= 0");
  }
  const bool dc_only = m.kind == MeasurementKind::output_offset ||
                       m.kind == MeasurementKind::input_offset ||
                       m.kind == MeasurementKind::node_voltage ||
                       m.kind == MeasurementKind::bandwidth || trip;
  if (dc_only && m.frequency != 0.0) {
    throw DesignError(where + ": a " + std::string(to_string(m.kind)) +
                      " measurement takes no frequency");
  }
  if (m.kind == MeasurementKind::phase && !(m.frequency > 0.0)) {
    throw DesignError(where + ": a phase measurement needs a frequency above 0 Hz");
  }
  if (m.kind == MeasurementKind::gain_error) {
    if (!std::isfinite(m.target) || m.target == 0.0) {
      throw DesignError(where + ": a gain_error measurement needs a finite, non-zero target gain");
    }
    if (m.frequency > 0.0 && m.target < 0.0) {
      throw DesignError(where + ": at a frequency the gain is a magnitude, so the target must be "
                        "positive");
    }
  } else if (m.target != 0.0) {
    throw DesignError(where + ": only a gain_error measurement takes a target");
  }
  if (!trip) {
    if (!m.opamp.empty()) {
      throw DesignError(where + ": only the trip-point kinds take an opamp");
    }
    return;
  }
  if (m.opamp.empty()) {
    throw DesignError(where + ": a " + std::string(to_string(m.kind)) +
                      " measurement names its deciding op-amp (opamp = \"U1\")");
  }
  const std::size_t u = circuit.find_element(m.opamp);
  if (u == Circuit::npos || circuit.elements()[u].kind != ElementKind::opamp) {
    throw DesignError(where + ": '" + m.opamp + "' is not an op-amp of the circuit");
  }
  const Element& amp = circuit.elements()[u];
  if (!has_limit(circuit, amp, "high") || !has_limit(circuit, amp, "low")) {
    throw DesignError(where + ": op-amp '" + m.opamp +
                      "' needs output limits on both sides for trip points (supply_high and "
                      "supply_low, or output_high and output_low)");
  }
}

void validate_spec(const std::vector<Measurement>& measurements, const Spec& spec) {
  bool found = false;
  std::string names;
  for (const auto& m : measurements) {
    found = found || m.name == spec.measurement;
    names += (names.empty() ? "" : ", ") + m.name;
  }
  if (!found) {
    throw DesignError("spec on '" + spec.measurement + "': no measurement has that name" +
                      (names.empty() ? std::string(" (the design has no measurements)")
                                     : " (measurements: " + names + ")"));
  }
  if (std::isnan(spec.min) || std::isnan(spec.max)) {
    throw DesignError("spec on '" + spec.measurement + "': a limit is not a number");
  }
  if (!spec.has_min() && !spec.has_max()) {
    throw DesignError("spec on '" + spec.measurement + "' has neither a min nor a max limit");
  }
  if (spec.min > spec.max) {
    // %g, not std::to_string: fixed six decimals would show 5e-7 as "0.000000".
    char min[32], max[32];
    std::snprintf(min, sizeof min, "%g", spec.min);
    std::snprintf(max, sizeof max, "%g", spec.max);
    throw DesignError("spec on '" + spec.measurement + "': min (" + min + ") is above max (" +
                      max + ")");
  }
}

namespace {

constexpr double coupling_tolerance = 1e-9;  // volts per volt: "does not reach"

// Compiles a trip-point measurement: three probes (rest, unit source, unit level) of the
// DC analysis with every deciding op-amp held.
void compile_trip(const Network& network, PlanBuilder& builder, const Measurement& m,
                  const std::vector<std::size_t>& deciding, CompiledMeasurement& cm) {
  const Circuit& c = network.circuit();
  const std::size_t u = c.find_element(m.opamp);
  const std::size_t src = c.find_element(m.inputs[0]);
  const Element& amp = c.elements()[u];
  Excitation rest;
  rest.overrides = {{src, 0.0}};
  Excitation unit;
  unit.sources_at_value = false;
  unit.opamp_errors = false;
  unit.overrides = {{src, 1.0}};
  Excitation level;
  level.sources_at_value = false;
  level.opamp_errors = false;
  level.output_levels = {{u, 1.0}};
  const auto affine = [&](std::size_t plus, std::size_t minus) {
    return AffineProbes{builder.probe(0.0, deciding, rest, plus, minus),
                        builder.probe(0.0, deciding, unit, plus, minus),
                        builder.probe(0.0, deciding, level, plus, minus)};
  };
  cm.input = affine(network.node_index(amp.nodes[0]), network.node_index(amp.nodes[1]));
  if (m.output.empty()) {
    cm.plus = network.node_index(amp.nodes[2]);
    cm.minus = Network::npos;
  }
  cm.output = affine(cm.plus, cm.minus);
  cm.opamp = u;
  cm.source_value = c.elements()[src].parameters.front();
  cm.open_loop_gain = amp.parameters[0];
  cm.offset = amp.parameters[2];
  cm.model = amp.model;
  cm.linear = false;
}

// V(plus) - V(minus) of a solution.
double read(const double* x, std::size_t plus, std::size_t minus) {
  return (plus == Network::npos ? 0.0 : x[plus]) - (minus == Network::npos ? 0.0 : x[minus]);
}

// Checks the trip-point measurements at nominal values and finds the linear op-amps each
// one relies on. Skipped when the held network is singular at nominal (the study reports it).
void check_trips(const Network& network, PlanBuilder& builder, Plan& plan,
                 const std::vector<Measurement>& measurements,
                 const std::vector<std::size_t>& deciding) {
  const Circuit& c = network.circuit();
  std::vector<double> theta;
  for (const auto& p : c.parameters()) theta.push_back(p.nominal);
  auto ws = network.make_workspace(2);
  if (network.factor_dc(theta.data(), ws, deciding) != SolveStatus::ok) return;
  for (std::size_t i = 0; i < measurements.size(); ++i) {
    const Measurement& m = measurements[i];
    if (!is_trip_point(m.kind)) continue;
    const CompiledMeasurement cm = plan.measurements[i];
    const Element& amp = c.elements()[cm.opamp];
    const std::size_t ip = network.node_index(amp.nodes[0]);
    const std::size_t im = network.node_index(amp.nodes[1]);
    const bool threshold = is_threshold(m.kind);
    // Copies: the probes added below grow the plan.
    const std::vector<Excitation> exs =
        plan.analyses[plan.probes[cm.input.rest].analysis].excitations;
    const Excitation rest = exs[plan.probes[cm.input.rest].excitation];
    const Excitation unit = exs[plan.probes[cm.input.source].excitation];
    const Excitation level = exs[plan.probes[cm.input.level].excitation];

    if (threshold) {
      const double* x = network.solve_dc(theta.data(), unit, ws, 0);
      if (!(std::abs(read(x, ip, im)) > 1e-12)) {
        throw DesignError("measurement '" + m.name + "': the source '" + m.inputs[0] +
                          "' does not reach the inputs of op-amp '" + m.opamp +
                          "' while its output is held at a limit, so it cannot trip it");
      }
    }
    // Another held op-amp whose output moves this one's inputs (or the measured output):
    // its state at this trip point is unknown to lotwise.
    for (const std::size_t j : deciding) {
      if (j == cm.opamp) continue;
      Excitation other;
      other.sources_at_value = false;
      other.opamp_errors = false;
      other.output_levels = {{j, 1.0}};
      const double* x = network.solve_dc(theta.data(), other, ws, 0);
      const double moved = threshold ? read(x, ip, im) : read(x, cm.plus, cm.minus);
      if (std::abs(moved) > coupling_tolerance) {
        throw DesignError("measurement '" + m.name + "': the " +
                          (threshold ? "inputs of op-amp '" + m.opamp + "'"
                                     : std::string("measured output")) +
                          " depend on the output of op-amp '" + c.elements()[j].name +
                          "', which is itself a deciding op-amp; its state at this trip point "
                          "is unknown, so lotwise cannot compute it (use dc_sweep)");
      }
    }
    // Linear op-amps with limits whose output reaches what this measurement reads: an
    // offset step on each shows whether it does.
    const double* base = network.solve_dc(theta.data(), rest, ws, 0);
    for (std::size_t w = 0; w < c.elements().size(); ++w) {
      const Element& el = c.elements()[w];
      if (el.kind != ElementKind::opamp) continue;
      if (std::find(deciding.begin(), deciding.end(), w) != deciding.end()) continue;
      const OutputLimits l = network.output_limits(theta.data(), w);
      if (std::isinf(l.low) && std::isinf(l.high)) continue;
      std::vector<double> moved_theta = theta;
      moved_theta[el.parameters[2]] += 1.0;
      const double* x = network.solve_dc(moved_theta.data(), rest, ws, 1);
      Watch watch;
      watch.element = w;
      const double input_moved = read(x, ip, im) - read(base, ip, im);
      const double output_moved = read(x, cm.plus, cm.minus) - read(base, cm.plus, cm.minus);
      watch.moves_input = threshold && std::abs(input_moved) > coupling_tolerance;
      watch.moves_output = !threshold && std::abs(output_moved) > coupling_tolerance;
      if (!watch.moves_input && !watch.moves_output) continue;
      const std::size_t out = network.node_index(el.nodes[2]);
      watch.output = AffineProbes{builder.probe(0.0, deciding, rest, out, Network::npos),
                                  builder.probe(0.0, deciding, unit, out, Network::npos),
                                  builder.probe(0.0, deciding, level, out, Network::npos)};
      plan.measurements[i].watches.push_back(watch);
    }
  }
}

}  // namespace

Plan make_plan(const Network& network, const std::vector<Measurement>& measurements) {
  Plan plan;
  PlanBuilder builder(network, plan);
  const Circuit& c = network.circuit();
  const std::vector<std::size_t> none;
  // Every deciding op-amp is held in the trip-point analysis: one factorisation serves all.
  std::vector<std::size_t> deciding;
  for (const Measurement& m : measurements) {
    if (!is_trip_point(m.kind)) continue;
    const std::size_t u = c.find_element(m.opamp);
    if (std::find(deciding.begin(), deciding.end(), u) == deciding.end()) deciding.push_back(u);
  }
  std::sort(deciding.begin(), deciding.end());
  bool any_linear = false;
  for (const Measurement& m : measurements) {
    CompiledMeasurement cm;
    cm.kind = m.kind;
    cm.frequency = m.frequency;
    cm.target = m.target;
    if (!m.output.empty()) {
      cm.plus = network.node_index(m.output[0]);
      cm.minus = m.output.size() > 1 ? network.node_index(m.output[1]) : Network::npos;
    }
    const std::size_t plus = cm.plus;
    const std::size_t minus = cm.minus;
    switch (m.kind) {
      case MeasurementKind::gain:
      case MeasurementKind::differential_gain:
      case MeasurementKind::phase:
      case MeasurementKind::gain_error:
        cm.first = builder.probe(m.frequency, none, signal_drive(c, m), plus, minus);
        break;
      case MeasurementKind::common_mode_gain:
        cm.first = builder.probe(m.frequency, none, common_drive(c, m), plus, minus);
        break;
      case MeasurementKind::cmrr:
        cm.first = builder.probe(m.frequency, none, signal_drive(c, m), plus, minus);
        cm.second = builder.probe(m.frequency, none, common_drive(c, m), plus, minus);
        break;
      case MeasurementKind::output_offset:
      case MeasurementKind::input_offset:
        // By superposition, output(op. point) - signal gain * applied signal is the output
        // with the signal removed but the inputs' common-mode level kept.
        cm.first = builder.probe(0.0, none, Excitation{}, plus, minus);
        cm.second = builder.probe(0.0, none, signal_drive(c, m), plus, minus);
        cm.signal_plus = c.elements()[source_index(c, m.inputs[0])].parameters.front();
        if (m.inputs.size() > 1) {
          cm.signal_minus = c.elements()[source_index(c, m.inputs[1])].parameters.front();
        }
        break;
      case MeasurementKind::node_voltage:
        cm.first = builder.probe(0.0, none, Excitation{}, plus, minus);
        break;
      case MeasurementKind::bandwidth:
        cm.drive = signal_drive(c, m);
        cm.first = builder.probe(0.0, none, cm.drive, plus, minus);
        break;
      case MeasurementKind::rising_threshold:
      case MeasurementKind::falling_threshold:
      case MeasurementKind::hysteresis:
      case MeasurementKind::threshold_centre:
      case MeasurementKind::output_high:
      case MeasurementKind::output_low:
        compile_trip(network, builder, m, deciding, cm);
        break;
    }
    any_linear = any_linear || cm.linear;
    plan.measurements.push_back(cm);
  }
  // Linear measurements assume every op-amp works linearly at the operating point.
  if (any_linear) {
    std::vector<double> theta;
    for (const auto& p : c.parameters()) theta.push_back(p.nominal);
    for (std::size_t e = 0; e < c.elements().size(); ++e) {
      if (c.elements()[e].kind != ElementKind::opamp) continue;
      const OutputLimits l = network.output_limits(theta.data(), e);
      if (std::isinf(l.low) && std::isinf(l.high)) continue;
      plan.limit_checks.push_back(LimitCheck{
          e, builder.probe(0.0, none, Excitation{}, network.node_index(c.elements()[e].nodes[2]),
                           Network::npos)});
    }
  }
  if (!deciding.empty()) check_trips(network, builder, plan, measurements, deciding);
  return plan;
}

namespace {

// Whether a measurement's value is read from its probes (and the source values) alone:
// no root search, no trip-point solve.
bool read_from_probes(MeasurementKind kind) {
  return kind != MeasurementKind::bandwidth && !is_trip_point(kind);
}

// The CMRR before its logarithm: |signal / common|, and whether the common-mode gain is
// within rounding of zero (a perfectly matched network), which is infinite rejection, not a
// 300 dB figure made of rounding noise. At DC the probes are real; |x + 0i| is |x| exactly,
// without a call to hypot.
struct RejectionRatio {
  double ratio;
  bool infinite;
};

// A probe's real part: probes are complex, or real where every analysis is at DC (the
// real part of the complex sums, by the same operations).
inline double real_part(double x) { return x; }
inline double real_part(const std::complex<double>& x) { return x.real(); }

template <typename P>
inline RejectionRatio rejection_ratio(const P& signal_probe, const P& common_probe, bool at_dc) {
  const double common = at_dc ? std::abs(real_part(common_probe)) : std::abs(common_probe);
  const double signal = at_dc ? std::abs(real_part(signal_probe)) : std::abs(signal_probe);
  return {signal / common, common <= 64.0 * std::numeric_limits<double>::epsilon() * signal};
}

inline double decibels(const RejectionRatio& r, double log_ratio) {
  return r.infinite ? std::numeric_limits<double>::infinity() : db_per_neper * log_ratio;
}

// The value of a measurement of a kind read_from_probes (m.kind, or the same kind known
// at compile time): probe p at probes[p * stride] (one build's probes, or one lane of the
// lanes' probes).
template <typename P>
inline double read_value(MeasurementKind kind, const CompiledMeasurement& m, const P* probes,
                         std::size_t stride, const double* theta) {
  const P first = probes[m.first * stride];
  const bool at_dc = m.frequency == 0.0;
  switch (kind) {
    case MeasurementKind::gain:
    case MeasurementKind::differential_gain:
    case MeasurementKind::common_mode_gain:
      return at_dc ? real_part(first) : std::abs(first);
    case MeasurementKind::cmrr: {
      const RejectionRatio r = rejection_ratio(first, probes[m.second * stride], at_dc);
      return decibels(r, natural_log(r.ratio));
    }
    case MeasurementKind::node_voltage: return real_part(first);
    case MeasurementKind::output_offset:
    case MeasurementKind::input_offset: {
      const double signal = theta[m.signal_plus] -
                            (m.signal_minus == Network::npos ? 0.0 : theta[m.signal_minus]);
      const double gain = real_part(probes[m.second * stride]);
      const double offset = real_part(first) - gain * signal;
      return kind == MeasurementKind::output_offset ? offset : offset / gain;
    }
    case MeasurementKind::phase: return std::arg(first) * (180.0 / 3.14159265358979323846);
    case MeasurementKind::gain_error: {
      const double gain = at_dc ? real_part(first) : std::abs(first);
      return (gain - m.target) / m.target;
    }
    default:  // a kind not read_from_probes: its own function computes it
      throw Error(std::string("internal: the ") + to_string(kind) + " measurement is not read from probes");
  }
}

// A probe's lanes as evaluate() sums it: 0, plus V(plus), minus V(minus), in that order
// (a null column is not there). Real lanes get the real part of the complex sums, by the
// same operations.
template <typename P, typename X>
void sum_probe(P* out, const X* plus, const X* minus) {
  for (std::size_t l = 0; l < solve_lanes; ++l) out[l] = P(0.0);
  if (plus) {
    for (std::size_t l = 0; l < solve_lanes; ++l) out[l] += plus[l];
  }
  if (minus) {
    for (std::size_t l = 0; l < solve_lanes; ++l) out[l] -= minus[l];
  }
}

// Measurement m of kind K into values[l][i] for the solved lanes (ok[l]). Every lane is
// computed, so that the loops carry no branch; a lane that did not solve holds stale
// probes, and its value is dropped.
template <MeasurementKind K, typename P>
void read_lanes(const CompiledMeasurement& m, std::size_t i, const P* lane_probes,
                const double* const* thetas, double* const* values, const unsigned char* ok,
                std::size_t count) {
  double out[solve_lanes];
  if constexpr (K == MeasurementKind::cmrr) {
    // read_value's operations, the logarithms taken side by side.
    const bool at_dc = m.frequency == 0.0;
    RejectionRatio parts[solve_lanes];
    double ratios[solve_lanes];
    for (std::size_t l = 0; l < count; ++l) {
      parts[l] = rejection_ratio(lane_probes[m.first * solve_lanes + l],
                                 lane_probes[m.second * solve_lanes + l], at_dc);
      ratios[l] = parts[l].ratio;
    }
    natural_log_each(ratios, out, count);
    for (std::size_t l = 0; l < count; ++l) out[l] = decibels(parts[l], out[l]);
  } else {
    for (std::size_t l = 0; l < count; ++l) {
      out[l] = read_value(K, m, lane_probes + l, solve_lanes, thetas[l]);
    }
  }
  for (std::size_t l = 0; l < count; ++l) {
    if (ok[l]) values[l][i] = out[l];
  }
}

}  // namespace

Evaluator::Evaluator(const Network& network, const Plan& plan,
                     const std::vector<std::size_t>* changing)
    : network_(network),
      plan_(plan),
      workspace_(network.make_workspace(plan.slots)),
      probe_values_(plan.probes.size()),
      saturated_(plan.measurements.size(), 0),
      lane_probes_(plan.probes.size() * lanes),
      lane_saturated_(plan.measurements.size() * (lanes + 1), 0),
      lane_saturated_opamp_(lanes, Network::npos) {
  // One pivot order per kind of matrix, chosen at nominal values and reused by every
  // sample (the dense factorisation remains the fallback).
  std::vector<double> nominal;
  for (const auto& p : network.circuit().parameters()) nominal.push_back(p.nominal);
  bool ac = false;
  for (const Analysis& analysis : plan.analyses) {
    if (analysis.frequency == 0.0) {
      network.prepare_dc(nominal.data(), workspace_, analysis.held);
    } else if (!ac) {
      ac = network.prepare_ac(nominal.data(), analysis.frequency, workspace_);
    }
  }
  std::vector<std::size_t> all;
  if (!changing) {
    for (std::size_t p = 0; p < nominal.size(); ++p) all.push_back(p);
    changing = &all;
  }
  auto solver = std::make_unique<LaneSolver>(network, nominal, *changing);
  for (std::size_t a = 0; a < plan.analyses.size(); ++a) {
    const Analysis& analysis = plan.analyses[a];
    std::vector<std::size_t> read;  // the unknowns the probes of this analysis read
    for (const Probe& probe : plan.probes) {
      if (probe.analysis != a) continue;
      if (probe.plus != Network::npos) read.push_back(probe.plus);
      if (probe.minus != Network::npos) read.push_back(probe.minus);
    }
    solver->add_analysis(workspace_, analysis.frequency, analysis.held, analysis.excitations, read);
  }
  if (solver->usable()) lane_solver_ = std::move(solver);
  reads_lanes_ = std::all_of(plan.measurements.begin(), plan.measurements.end(),
                             [](const CompiledMeasurement& m) { return read_from_probes(m.kind); });
  // Every analysis at DC (a phase measurement always has one above 0 Hz): the lanes'
  // probes are real.
  real_lanes_ = reads_lanes_ && std::all_of(plan.analyses.begin(), plan.analyses.end(),
                                            [](const Analysis& a) { return a.frequency == 0.0; });
  if (real_lanes_) lane_real_probes_.assign(plan.probes.size() * lanes, 0.0);
}

Evaluator::~Evaluator() = default;
Evaluator::Evaluator(Evaluator&&) noexcept = default;

void Evaluator::keep_lane(std::size_t l) {
  // The flags are all clear unless an op-amp saturated (see saturated_lane).
  lane_saturated_opamp_[l] = saturated_opamp_;
  if (saturated_opamp_ == Network::npos) return;
  std::copy(saturated_.begin(), saturated_.end(),
            lane_saturated_.begin() + static_cast<std::ptrdiff_t>(l * saturated_.size()));
}

void Evaluator::evaluate_lanes(const double* const* thetas, double* const* values,
                               SolveStatus* statuses, std::size_t count) {
  if (!lane_solver_) {
    for (std::size_t l = 0; l < count; ++l) {
      statuses[l] = evaluate(thetas[l], values[l]);
      keep_lane(l);
    }
    return;
  }
  LaneSolver& solver = *lane_solver_;
  solver.load(thetas, count);
  unsigned char ok[lanes];
  solver.check(ok);
  for (std::size_t a = 0; a < plan_.analyses.size(); ++a) {
    solver.solve(a, ok);
    const bool dc = plan_.analyses[a].frequency == 0.0;
    for (std::size_t p = 0; p < plan_.probes.size(); ++p) {
      const Probe& probe = plan_.probes[p];
      if (probe.analysis != a) continue;
      const bool plus = probe.plus != Network::npos, minus = probe.minus != Network::npos;
      if (dc) {
        const double* x_plus = plus ? solver.dc(a, probe.excitation, probe.plus) : nullptr;
        const double* x_minus = minus ? solver.dc(a, probe.excitation, probe.minus) : nullptr;
        if (real_lanes_) {
          sum_probe(&lane_real_probes_[p * lanes], x_plus, x_minus);
        } else {
          sum_probe(&lane_probes_[p * lanes], x_plus, x_minus);
        }
      } else {
        sum_probe(&lane_probes_[p * lanes], plus ? solver.ac(a, probe.excitation, probe.plus) : nullptr,
                  minus ? solver.ac(a, probe.excitation, probe.minus) : nullptr);
      }
    }
  }
  if (real_lanes_) {
    finish_lanes(thetas, lane_real_probes_.data(), values, statuses, ok, count);
  } else if (reads_lanes_) {
    finish_lanes(thetas, lane_probes_.data(), values, statuses, ok, count);
  }
  for (std::size_t l = 0; l < count; ++l) {
    if (ok[l]) {
      if (reads_lanes_) continue;  // finished side by side
      for (std::size_t p = 0; p < probe_values_.size(); ++p) probe_values_[p] = lane_probes_[p * lanes + l];
      statuses[l] = finish(thetas[l], values[l]);
    } else {
      // Out of range, or a pivot poor for this vector: the one-at-a-time path decides
      // (and falls back to the dense factorisation).
      statuses[l] = evaluate(thetas[l], values[l]);
    }
    keep_lane(l);
  }
}

SolveStatus Evaluator::evaluate(const double* theta, double* values) {
  for (std::size_t a = 0; a < plan_.analyses.size(); ++a) {
    const Analysis& analysis = plan_.analyses[a];
    const bool dc = analysis.frequency == 0.0;
    const SolveStatus status = dc ? network_.factor_dc(theta, workspace_, analysis.held)
                                  : network_.factor_ac(theta, analysis.frequency, workspace_);
    if (status != SolveStatus::ok) {
      for (std::size_t i = 0; i < plan_.measurements.size(); ++i) values[i] = nan;
      std::fill(saturated_.begin(), saturated_.end(), static_cast<unsigned char>(0));
      saturated_opamp_ = Network::npos;
      return status;
    }
    // All right-hand sides of the analysis in one pass over the factors.
    const Excitation* excitations = analysis.excitations.data();
    const std::size_t count = analysis.excitations.size();
    if (dc) {
      network_.solve_dc(theta, excitations, count, workspace_);
    } else {
      network_.solve_ac(theta, excitations, count, workspace_);
    }
    auto& d = workspace_.data();
    for (std::size_t p = 0; p < plan_.probes.size(); ++p) {
      const Probe& probe = plan_.probes[p];
      if (probe.analysis != a) continue;
      const auto col = static_cast<Eigen::Index>(probe.excitation);
      std::complex<double> v = 0.0;
      if (dc) {
        if (probe.plus != Network::npos) v += d.x(static_cast<Eigen::Index>(probe.plus), col);
        if (probe.minus != Network::npos) v -= d.x(static_cast<Eigen::Index>(probe.minus), col);
      } else {
        if (probe.plus != Network::npos) v += d.ac_x(static_cast<Eigen::Index>(probe.plus), col);
        if (probe.minus != Network::npos) v -= d.ac_x(static_cast<Eigen::Index>(probe.minus), col);
      }
      probe_values_[p] = v;
    }
  }
  return finish(theta, values);
}

// finish() for the solved lanes of a plan whose every value is read from the probes,
// measurement by measurement across the lanes: the same operations per lane.
template <typename P>
void Evaluator::finish_lanes(const double* const* thetas, const P* probes, double* const* values,
                             SolveStatus* statuses, const unsigned char* ok, std::size_t count) {
  std::size_t saturated[lanes];
  const bool limited = !plan_.limit_checks.empty();  // else no call per lane
  for (std::size_t l = 0; l < count; ++l) {
    saturated[l] = ok[l] && limited
                       ? saturated_at_operating_point(thetas[l], probes + l, lanes)
                       : Network::npos;
  }
  const std::size_t m_count = plan_.measurements.size();
  for (std::size_t i = 0; i < m_count; ++i) {
    const CompiledMeasurement& m = plan_.measurements[i];
    using K = MeasurementKind;
    switch (m.kind) {  // one formula per loop over the lanes
      case K::gain: read_lanes<K::gain>(m, i, probes, thetas, values, ok, count); break;
      case K::differential_gain:
        read_lanes<K::differential_gain>(m, i, probes, thetas, values, ok, count);
        break;
      case K::common_mode_gain:
        read_lanes<K::common_mode_gain>(m, i, probes, thetas, values, ok, count);
        break;
      case K::cmrr: read_lanes<K::cmrr>(m, i, probes, thetas, values, ok, count); break;
      case K::output_offset: read_lanes<K::output_offset>(m, i, probes, thetas, values, ok, count); break;
      case K::input_offset: read_lanes<K::input_offset>(m, i, probes, thetas, values, ok, count); break;
      case K::node_voltage: read_lanes<K::node_voltage>(m, i, probes, thetas, values, ok, count); break;
      case K::phase: read_lanes<K::phase>(m, i, probes, thetas, values, ok, count); break;
      case K::gain_error: read_lanes<K::gain_error>(m, i, probes, thetas, values, ok, count); break;
      default: break;  // not read_from_probes: plans with such a kind do not come here
    }
    if (!m.linear || !limited) continue;
    // Withheld where an op-amp is beyond its limits at the operating point.
    for (std::size_t l = 0; l < count; ++l) {
      if (ok[l] && saturated[l] != Network::npos) values[l][i] = nan;
    }
  }
  for (std::size_t l = 0; l < count; ++l) {
    if (!ok[l]) continue;
    statuses[l] = SolveStatus::ok;
    lane_saturated_opamp_[l] = saturated[l];
    if (saturated[l] == Network::npos) continue;  // the flags are read only when set
    for (std::size_t i = 0; i < m_count; ++i) {
      lane_saturated_[l * m_count + i] = plan_.measurements[i].linear ? 1 : 0;
    }
  }
}

template <typename P>
std::size_t Evaluator::saturated_at_operating_point(const double* theta, const P* probes,
                                                    std::size_t stride) const {
  std::size_t saturated = Network::npos;  // the last op-amp found beyond its limits
  for (const LimitCheck& check : plan_.limit_checks) {
    const double v = real_part(probes[check.probe * stride]);
    const OutputLimits l = network_.output_limits(theta, check.element);
    if (v > l.high || v < l.low) saturated = check.element;
  }
  return saturated;
}

SolveStatus Evaluator::finish(const double* theta, double* values) {
  // An op-amp beyond its limits at the operating point: the linear model no longer
  // describes the circuit, so every linear measurement is withheld.
  std::fill(saturated_.begin(), saturated_.end(), static_cast<unsigned char>(0));
  saturated_opamp_ = saturated_at_operating_point(theta, probe_values_.data(), 1);
  const bool operating_point_saturated = saturated_opamp_ != Network::npos;
  SolveStatus status = SolveStatus::ok;
  for (std::size_t i = 0; i < plan_.measurements.size(); ++i) {
    const CompiledMeasurement& m = plan_.measurements[i];
    if (m.linear && operating_point_saturated) {
      values[i] = nan;
      saturated_[i] = 1;
      continue;
    }
    if (m.kind == MeasurementKind::bandwidth) {
      values[i] = bandwidth(m, theta, std::abs(probe_values_[m.first]), status);
      if (status != SolveStatus::ok) return status;
    } else if (is_trip_point(m.kind)) {
      values[i] = trip_point(m, theta, i);
    } else {
      values[i] = read_value(m.kind, m, probe_values_.data(), 1, theta);
    }
  }
  return status;
}

bool Evaluator::watches_hold(const CompiledMeasurement& m, const double* theta, double s,
                             double level, bool input) {
  for (const Watch& w : m.watches) {
    if (input ? !w.moves_input : !w.moves_output) continue;
    const double v = probe_values_[w.output.rest].real() +
                     s * probe_values_[w.output.source].real() +
                     level * probe_values_[w.output.level].real();
    const OutputLimits l = network_.output_limits(theta, w.element);
    if (v > l.high || v < l.low) {
      saturated_opamp_ = w.element;
      return false;
    }
  }
  return true;
}

// With the deciding op-amp's output held at L, its differential input e = V(+) - V(-) + Vos
// is affine in the driving source s. It holds L while A0 * e lies beyond L, so it leaves L
// where e = L / A0 (e = 0 for the ideal model): each threshold is the root of an affine
// function. The state held before a rising crossing is the low limit when the source
// pushes e upwards (a non-inverting decision) and the high limit otherwise.
double Evaluator::trip_point(const CompiledMeasurement& m, const double* theta, std::size_t index) {
  const OutputLimits lim = network_.output_limits(theta, m.opamp);
  if (m.kind == MeasurementKind::output_high || m.kind == MeasurementKind::output_low) {
    const double level = m.kind == MeasurementKind::output_high ? lim.high : lim.low;
    const double s = theta[m.source_value];
    if (!watches_hold(m, theta, s, level, false)) {
      saturated_[index] = 1;
      return nan;
    }
    return probe_values_[m.output.rest].real() + s * probe_values_[m.output.source].real() +
           level * probe_values_[m.output.level].real();
  }
  const double slope = probe_values_[m.input.source].real();
  if (!(slope != 0.0) || !std::isfinite(slope)) return nan;
  const double inverse_gain = m.model == OpAmpModel::ideal ? 0.0 : 1.0 / theta[m.open_loop_gain];
  const double e0 = probe_values_[m.input.rest].real() + theta[m.offset];
  const double per_level = probe_values_[m.input.level].real() - inverse_gain;
  const double before_rise = slope > 0.0 ? lim.low : lim.high;
  const double before_fall = slope > 0.0 ? lim.high : lim.low;
  const double rising = -(e0 + before_rise * per_level) / slope;
  const double falling = -(e0 + before_fall * per_level) / slope;
  bool linear_parts_ok = true;
  if (m.kind != MeasurementKind::falling_threshold) {
    linear_parts_ok = watches_hold(m, theta, rising, before_rise, true);
  }
  if (linear_parts_ok && m.kind != MeasurementKind::rising_threshold) {
    linear_parts_ok = watches_hold(m, theta, falling, before_fall, true);
  }
  if (!linear_parts_ok) {
    saturated_[index] = 1;
    return nan;
  }
  switch (m.kind) {
    case MeasurementKind::rising_threshold: return rising;
    case MeasurementKind::falling_threshold: return falling;
    case MeasurementKind::hysteresis: return rising - falling;
    case MeasurementKind::threshold_centre: return 0.5 * (rising + falling);
    default: return nan;
  }
}

// Root of log|H(f)| - log|H(0)| + ln(2)/2 in log-frequency, bracketed by stepping by
// factors of two from the nominal bandwidth, then TOMS 748.
double Evaluator::bandwidth(const CompiledMeasurement& m, const double* theta, double dc_gain,
                            SolveStatus& status) {
  if (!(dc_gain > 0.0) || !std::isfinite(dc_gain)) return nan;
  const double half_power = 0.5 * std::log(2.0);
  auto h = [&](double log_f) {
    const double f = std::exp(log_f);
    const SolveStatus s = network_.factor_ac(theta, f, workspace_);
    if (s != SolveStatus::ok) {
      status = s;
      return nan;
    }
    const std::complex<double>* x = network_.solve_ac(theta, m.drive, workspace_, 0);
    std::complex<double> v = 0.0;
    if (m.plus != Network::npos) v += x[m.plus];
    if (m.minus != Network::npos) v -= x[m.minus];
    return std::log(std::abs(v) / dc_gain) + half_power;
  };
  double lo = std::log(m.nominal_bandwidth > 0.0 ? m.nominal_bandwidth : 1.0);
  double h_lo = h(lo);
  if (std::isnan(h_lo)) return nan;
  double hi = lo, h_hi = h_lo;
  const double step = std::log(2.0);
  // Up to 2^130 either way: any physical bandwidth lies within.
  for (int i = 0; i < 130 && (h_lo > 0.0) == (h_hi > 0.0); ++i) {
    if (h_lo > 0.0) {
      lo = hi;
      h_lo = h_hi;
      hi += step;
      h_hi = h(hi);
    } else {
      hi = lo;
      h_hi = h_lo;
      lo -= step;
      h_lo = h(lo);
    }
    if (std::isnan(h_lo) || std::isnan(h_hi)) return nan;
  }
  if ((h_lo > 0.0) == (h_hi > 0.0)) return nan;  // gain never falls 3 dB
  if (h_lo == 0.0) return std::exp(lo);
  if (h_hi == 0.0) return std::exp(hi);
  std::uintmax_t iterations = 200;
  try {
    const auto root = boost::math::tools::toms748_solve(
        h, lo, hi, h_lo, h_hi, boost::math::tools::eps_tolerance<double>(50), iterations);
    return std::exp(0.5 * (root.first + root.second));
  } catch (const std::exception&) {
    return nan;  // a singular draw inside the search; status says so
  }
}

}  // namespace detail
}  // namespace lotwise
