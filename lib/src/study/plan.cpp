#include "study/plan.hpp"

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <string>

#include <boost/math/tools/roots.hpp>

#include "mna/layout.hpp"

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
  }
  return "";
}

namespace detail {
namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();

bool same(const Excitation& a, const Excitation& b) {
  return a.sources_at_value == b.sources_at_value && a.opamp_errors == b.opamp_errors &&
         a.overrides == b.overrides;
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

  std::size_t probe(double frequency, const Excitation& ex, std::size_t plus, std::size_t minus) {
    std::size_t a = 0;
    while (a < plan_.analyses.size() && plan_.analyses[a].frequency != frequency) ++a;
    if (a == plan_.analyses.size()) plan_.analyses.push_back(Analysis{frequency, {}});
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
  std::size_t lo = 0, hi = 0;
  switch (m.kind) {
    case MeasurementKind::gain:
    case MeasurementKind::bandwidth: lo = hi = 1; break;
    case MeasurementKind::differential_gain:
    case MeasurementKind::common_mode_gain:
    case MeasurementKind::cmrr: lo = hi = 2; break;
    case MeasurementKind::output_offset:
    case MeasurementKind::input_offset: lo = 1; hi = 2; break;
    case MeasurementKind::node_voltage: lo = hi = 0; break;
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
  }
  if (m.output.empty() || m.output.size() > 2) {
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
                       m.kind == MeasurementKind::bandwidth;
  if (dc_only && m.frequency != 0.0) {
    throw DesignError(where + ": a " + std::string(to_string(m.kind)) +
                      " measurement takes no frequency");
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

Plan make_plan(const Network& network, const std::vector<Measurement>& measurements) {
  Plan plan;
  PlanBuilder builder(network, plan);
  const Circuit& c = network.circuit();
  for (const Measurement& m : measurements) {
    const std::size_t plus = network.node_index(m.output[0]);
    const std::size_t minus = m.output.size() > 1 ? network.node_index(m.output[1]) : Network::npos;
    CompiledMeasurement cm{m.kind, 0, 0, Network::npos, Network::npos, m.frequency, {}, plus, minus, 0.0};
    switch (m.kind) {
      case MeasurementKind::gain:
      case MeasurementKind::differential_gain:
        cm.first = builder.probe(m.frequency, signal_drive(c, m), plus, minus);
        break;
      case MeasurementKind::common_mode_gain:
        cm.first = builder.probe(m.frequency, common_drive(c, m), plus, minus);
        break;
      case MeasurementKind::cmrr:
        cm.first = builder.probe(m.frequency, signal_drive(c, m), plus, minus);
        cm.second = builder.probe(m.frequency, common_drive(c, m), plus, minus);
        break;
      case MeasurementKind::output_offset:
      case MeasurementKind::input_offset:
        // By superposition, output(op. point) - signal gain * applied signal is the output
        // with the signal removed but the inputs' common-mode level kept.
        cm.first = builder.probe(0.0, Excitation{}, plus, minus);
        cm.second = builder.probe(0.0, signal_drive(c, m), plus, minus);
        cm.signal_plus = c.elements()[source_index(c, m.inputs[0])].parameters.front();
        if (m.inputs.size() > 1) {
          cm.signal_minus = c.elements()[source_index(c, m.inputs[1])].parameters.front();
        }
        break;
      case MeasurementKind::node_voltage:
        cm.first = builder.probe(0.0, Excitation{}, plus, minus);
        break;
      case MeasurementKind::bandwidth:
        cm.drive = signal_drive(c, m);
        cm.first = builder.probe(0.0, cm.drive, plus, minus);
        break;
    }
    plan.measurements.push_back(cm);
  }
  return plan;
}

Evaluator::Evaluator(const Network& network, const Plan& plan)
    : network_(network),
      plan_(plan),
      workspace_(network.make_workspace(plan.slots)),
      probe_values_(plan.probes.size()) {}

SolveStatus Evaluator::evaluate(const double* theta, double* values) {
  for (std::size_t a = 0; a < plan_.analyses.size(); ++a) {
    const Analysis& analysis = plan_.analyses[a];
    const bool dc = analysis.frequency == 0.0;
    const SolveStatus status = dc ? network_.factor_dc(theta, workspace_)
                                  : network_.factor_ac(theta, analysis.frequency, workspace_);
    if (status != SolveStatus::ok) {
      for (std::size_t i = 0; i < plan_.measurements.size(); ++i) values[i] = nan;
      return status;
    }
    for (std::size_t e = 0; e < analysis.excitations.size(); ++e) {
      if (dc) network_.solve_dc(theta, analysis.excitations[e], workspace_, e);
      else network_.solve_ac(theta, analysis.excitations[e], workspace_, e);
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
  SolveStatus status = SolveStatus::ok;
  for (std::size_t i = 0; i < plan_.measurements.size(); ++i) {
    const CompiledMeasurement& m = plan_.measurements[i];
    const std::complex<double> first = probe_values_[m.first];
    const bool at_dc = m.frequency == 0.0;
    switch (m.kind) {
      case MeasurementKind::gain:
      case MeasurementKind::differential_gain:
      case MeasurementKind::common_mode_gain:
        values[i] = at_dc ? first.real() : std::abs(first);
        break;
      case MeasurementKind::cmrr: {
        // A common-mode gain within rounding of zero (a perfectly matched network) is
        // infinite rejection, not a 300 dB figure made of rounding noise.
        const double common = std::abs(probe_values_[m.second]);
        const double signal = std::abs(first);
        values[i] = common <= 64.0 * std::numeric_limits<double>::epsilon() * signal
                        ? std::numeric_limits<double>::infinity()
                        : 20.0 * std::log10(signal / common);
        break;
      }
      case MeasurementKind::node_voltage: values[i] = first.real(); break;
      case MeasurementKind::output_offset:
      case MeasurementKind::input_offset: {
        const double signal = theta[m.signal_plus] -
                              (m.signal_minus == Network::npos ? 0.0 : theta[m.signal_minus]);
        const double gain = probe_values_[m.second].real();
        const double offset = first.real() - gain * signal;
        values[i] = m.kind == MeasurementKind::output_offset ? offset : offset / gain;
        break;
      }
      case MeasurementKind::bandwidth:
        values[i] = bandwidth(m, theta, std::abs(first), status);
        if (status != SolveStatus::ok) return status;
        break;
    }
  }
  return status;
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
