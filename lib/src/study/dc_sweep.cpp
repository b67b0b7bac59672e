// The saturating DC transfer sweep (lotwise/dc_sweep.hpp): each op-amp is linear, or held at a
// limit by the same row replacement the trip-point analysis uses, and each step settles
// the states from the previous step's, so hysteresis is followed.
#include "lotwise/dc_sweep.hpp"

#include <cmath>
#include <cstdio>
#include <string>

#include "lotwise/error.hpp"
#include "lotwise/study.hpp"

namespace lotwise {

const char* to_string(OutputState state) {
  switch (state) {
    case OutputState::linear: return "linear";
    case OutputState::high: return "high";
    case OutputState::low: return "low";
  }
  return "?";
}

namespace {

struct Amp {
  std::size_t element;
  std::size_t plus, minus, out;  // unknown indices (npos: ground)
  double offset;
  double inverse_gain;           // 1/A0 at DC; 0 for the ideal model
  OutputLimits limits;
};

double read(const double* x, std::size_t plus, std::size_t minus) {
  return (plus == Network::npos ? 0.0 : x[plus]) - (minus == Network::npos ? 0.0 : x[minus]);
}

std::string volts(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.9g", v);
  return buf;
}

TransferCurve transfer(const Network& network, const std::vector<double>& theta,
                       const std::string& source, const std::vector<std::string>& output,
                       const std::vector<double>& path,
                       const std::vector<SweepDirection>& directions) {
  const Circuit& c = network.circuit();
  if (theta.size() != c.parameters().size()) {
    throw Error("dc sweep: expected " + std::to_string(c.parameters().size()) +
                " parameter values, got " + std::to_string(theta.size()));
  }
  const std::size_t src = c.find_element(source);
  if (src == Circuit::npos || (c.elements()[src].kind != ElementKind::voltage_source &&
                               c.elements()[src].kind != ElementKind::current_source)) {
    throw DesignError("dc sweep: '" + source + "' is not an independent source of the circuit");
  }
  if (output.empty() || output.size() > 2) {
    throw DesignError("dc sweep: output must be one node or a pair of nodes (plus, minus)");
  }
  for (const auto& node : output) {
    if (!c.has_node(node)) throw DesignError("dc sweep: no node called '" + node + "'");
  }
  for (const double v : path) {
    if (!std::isfinite(v)) throw DesignError("dc sweep: every source value must be finite");
  }
  if (network.check_values(theta.data()) != SolveStatus::ok) {
    throw CircuitError("dc sweep: " + network.diagnose_singular(theta.data(), 0.0));
  }
  const std::size_t out_plus = network.node_index(output[0]);
  const std::size_t out_minus = output.size() > 1 ? network.node_index(output[1]) : Network::npos;

  TransferCurve curve;
  curve.source = source;
  curve.output = output;
  std::vector<Amp> amps;
  for (std::size_t e = 0; e < c.elements().size(); ++e) {
    const Element& el = c.elements()[e];
    if (el.kind != ElementKind::opamp) continue;
    curve.opamps.push_back(el.name);
    amps.push_back(Amp{e, network.node_index(el.nodes[0]), network.node_index(el.nodes[1]),
                       network.node_index(el.nodes[2]), theta[el.parameters[2]],
                       el.model == OpAmpModel::ideal ? 0.0 : 1.0 / theta[el.parameters[0]],
                       network.output_limits(theta.data(), e)});
  }
  const std::size_t n = amps.size();
  // The first step starts from every limited op-amp at its low limit (high if it has none).
  std::vector<OutputState> state(n, OutputState::linear);
  for (std::size_t j = 0; j < n; ++j) {
    if (std::isfinite(amps[j].limits.low)) state[j] = OutputState::low;
    else if (std::isfinite(amps[j].limits.high)) state[j] = OutputState::high;
  }

  auto ws = network.make_workspace(2);
  std::vector<std::size_t> held;
  Excitation ex;
  ex.overrides = {{src, 0.0}};
  std::vector<OutputState> came_from(n);
  // Whether an op-amp just released from a limit closes a regenerative loop on itself
  // (loop gain A0 b > 1, b = d(V+ - V-)/d(output) with the output held): only then does a
  // linear solution beyond the limit it left mean a switch to the other limit; otherwise
  // it is rounding at the edge of the linear range.
  std::vector<unsigned char> regenerative(n, 0);
  Excitation unit_level;
  unit_level.sources_at_value = false;
  unit_level.opamp_errors = false;
  const std::size_t max_iterations = 16 + 8 * n;

  auto need_limit = [&](std::size_t j, OutputState side, double at) {
    const double level = side == OutputState::high ? amps[j].limits.high : amps[j].limits.low;
    if (!std::isfinite(level)) {
      throw CircuitError("dc sweep: at " + source + " = " + volts(at) + ", op-amp '" +
                         curve.opamps[j] + "' must switch to its " + to_string(side) +
                         " output limit, but it has none; give it supply or output limits");
    }
  };

  for (std::size_t step = 0; step < path.size(); ++step) {
    const double s = path[step];
    ex.overrides[0].second = s;
    std::fill(came_from.begin(), came_from.end(), OutputState::linear);
    std::size_t last_released = Network::npos;  // op-amp most recently turned linear
    const double* x = nullptr;
    bool settled = false;
    for (std::size_t it = 0; it < max_iterations && !settled; ++it) {
      held.clear();
      ex.output_levels.clear();
      for (std::size_t j = 0; j < n; ++j) {
        if (state[j] == OutputState::linear) continue;
        held.push_back(amps[j].element);
        ex.output_levels.emplace_back(amps[j].element, state[j] == OutputState::high
                                                           ? amps[j].limits.high
                                                           : amps[j].limits.low);
      }
      const SolveStatus status = network.factor_dc(theta.data(), ws, held);
      if (status == SolveStatus::singular) {
        // Turning that op-amp linear left nothing to fix its output (no negative
        // feedback): it goes straight to the other limit.
        if (last_released == Network::npos) {
          throw CircuitError("dc sweep: at " + source + " = " + volts(s) + ", " +
                             network.diagnose_singular(theta.data(), 0.0, held));
        }
        const std::size_t j = last_released;
        const OutputState other =
            came_from[j] == OutputState::high ? OutputState::low : OutputState::high;
        need_limit(j, other, s);
        state[j] = other;
        last_released = Network::npos;
        continue;
      }
      if (status != SolveStatus::ok) {
        throw CircuitError("dc sweep: " + network.diagnose_singular(theta.data(), 0.0, held));
      }
      x = network.solve_dc(theta.data(), ex, ws, 0);
      settled = true;
      for (std::size_t j = 0; j < n && settled; ++j) {
        const Amp& a = amps[j];
        const double level = x[a.out];
        const double e = read(x, a.plus, a.minus) + a.offset;
        const auto release = [&](OutputState from) {
          unit_level.output_levels = {{a.element, 1.0}};
          const double* y = network.solve_dc(theta.data(), unit_level, ws, 1);
          const double loop = read(y, a.plus, a.minus);
          regenerative[j] = a.inverse_gain == 0.0 ? loop > 1e-12 : loop > a.inverse_gain;
          state[j] = OutputState::linear;
          came_from[j] = from;
          last_released = j;
          settled = false;
        };
        switch (state[j]) {
          case OutputState::linear:
            if (level > a.limits.high) {
              // Released from high and pushed back above it by positive feedback: the
              // output runs to the other limit.
              if (came_from[j] != OutputState::high) state[j] = OutputState::high;
              else if (regenerative[j]) state[j] = OutputState::low;
              else break;  // rounding at the edge of the linear range
              settled = false;
            } else if (level < a.limits.low) {
              if (came_from[j] != OutputState::low) state[j] = OutputState::low;
              else if (regenerative[j]) state[j] = OutputState::high;
              else break;
              settled = false;
            }
            if (!settled) need_limit(j, state[j], s);
            break;
          // Held at L while A0 * e stays beyond L (e beyond 0 for the ideal model).
          case OutputState::high:
            if (e - a.limits.high * a.inverse_gain < 0.0) release(OutputState::high);
            break;
          case OutputState::low:
            if (e - a.limits.low * a.inverse_gain > 0.0) release(OutputState::low);
            break;
        }
      }
    }
    if (!settled) {
      throw CircuitError("dc sweep: at " + source + " = " + volts(s) +
                         " the op-amps find no stable DC state (the circuit may oscillate)");
    }
    curve.points.push_back(SweepPoint{s, read(x, out_plus, out_minus), directions[step]});
    curve.states.insert(curve.states.end(), state.begin(), state.end());
  }
  return curve;
}

}  // namespace

TransferCurve dc_transfer(const Network& network, const std::vector<double>& parameters,
                          const std::string& source, const std::vector<std::string>& output,
                          const std::vector<double>& path) {
  std::vector<SweepDirection> directions;
  for (std::size_t i = 0; i < path.size(); ++i) {
    directions.push_back(i == 0 || path[i] >= path[i - 1] ? SweepDirection::up
                                                          : SweepDirection::down);
  }
  return transfer(network, parameters, source, output, path, directions);
}

TransferCurve dc_sweep(const Network& network, const std::vector<double>& parameters,
                       const std::string& source, const std::vector<std::string>& output,
                       const std::vector<double>& values) {
  for (std::size_t i = 1; i < values.size(); ++i) {
    if (!(values[i] >= values[i - 1])) {
      throw DesignError("dc sweep: the values must be in ascending order");
    }
  }
  std::vector<double> path(values);
  path.insert(path.end(), values.rbegin(), values.rend());
  std::vector<SweepDirection> directions(values.size(), SweepDirection::up);
  directions.resize(path.size(), SweepDirection::down);
  return transfer(network, parameters, source, output, path, directions);
}

TransferCurve dc_sweep(const Study& study, const std::string& source,
                       const std::vector<std::string>& output, const std::vector<double>& values) {
  return dc_sweep(study.network(), study.nominal_parameters(), source, output, values);
}

}  // namespace lotwise
