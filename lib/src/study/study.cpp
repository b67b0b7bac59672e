#include "lotwise/study.hpp"

#include <cmath>
#include <cstdio>
#include <string>
#include <utility>

#include "lotwise/error.hpp"
#include "study/study_impl.hpp"

namespace lotwise {
namespace {

Design checked(Design design) {
  const auto& ms = design.measurements;
  for (std::size_t i = 0; i < ms.size(); ++i) {
    detail::validate_measurement(design.circuit, ms[i]);
    for (std::size_t j = 0; j < i; ++j) {
      if (ms[j].name == ms[i].name) {
        throw DesignError("two measurements are called '" + ms[i].name + "'");
      }
    }
  }
  for (const auto& spec : design.specs) detail::validate_spec(ms, spec);
  return design;
}

std::vector<double> nominal_of(const Circuit& circuit) {
  std::vector<double> theta;
  for (const auto& p : circuit.parameters()) theta.push_back(p.nominal);
  return theta;
}

}  // namespace

std::string Study::Impl::saturation_message(const detail::Evaluator& evaluator) const {
  const std::size_t e = evaluator.saturated_opamp();
  const Element& amp = design.circuit.elements()[e];
  const OutputLimits l = network.output_limits(nominal_parameters.data(), e);
  std::string linear, trip;
  for (std::size_t i = 0; i < design.measurements.size(); ++i) {
    if (!evaluator.saturated()[i]) continue;
    std::string& list = is_trip_point(design.measurements[i].kind) ? trip : linear;
    list += (list.empty() ? "'" : ", '") + design.measurements[i].name + "'";
  }
  char limits[96];
  std::snprintf(limits, sizeof limits, "%g V to %g V", l.low, l.high);
  std::string text = "at nominal values, op-amp '" + amp.name + "' is saturated: ";
  if (!linear.empty()) {
    // The operating point of the all-linear network, for the message.
    const std::vector<double> op = network.operating_point(nominal_parameters);
    const std::size_t out = network.node_index(amp.nodes[2]);
    char level[48];
    std::snprintf(level, sizeof level, "%g V", out == Network::npos ? 0.0 : op[out]);
    text += "its output would sit at " + std::string(level) + " at the operating point, beyond "
            "its output range of " + limits + ", so the linear measurements " + linear +
            " would be wrong. An op-amp with no negative feedback (a comparator) is measured "
            "with the trip-point kinds; otherwise check the feedback network, the supplies "
            "and the input levels";
  } else {
    text += "at a trip point of " + trip + " its output would pass its range of " + limits +
            ", so the trip point it helps set would be wrong; check its supplies and input levels";
  }
  return text;
}

Study::Impl::Impl(Design d)
    : design(checked(std::move(d))),
      network(design.circuit),
      model(design.circuit, design.variations, design.correlations, design.temperature),
      plan(detail::make_plan(network, design.measurements)),
      nominal_parameters(nominal_of(design.circuit)),
      nominal_values(design.measurements.size()) {
  detail::Evaluator evaluator(network, plan);
  if (evaluator.evaluate(nominal_parameters.data(), nominal_values.data()) != SolveStatus::ok) {
    for (const auto& analysis : plan.analyses) {
      auto ws = network.make_workspace();
      const SolveStatus s =
          analysis.frequency == 0.0
              ? network.factor_dc(nominal_parameters.data(), ws, analysis.held)
              : network.factor_ac(nominal_parameters.data(), analysis.frequency, ws);
      if (s != SolveStatus::ok) {
        throw CircuitError("at nominal values, " +
                           network.diagnose_singular(nominal_parameters.data(), analysis.frequency,
                                                     analysis.held));
      }
    }
    throw CircuitError("at nominal values, a bandwidth search met a singular frequency");
  }
  // A design that saturates at nominal asks a linear question of a circuit that is not
  // working linearly: an error, not a yield of zero.
  if (evaluator.any_saturated()) throw CircuitError(saturation_message(evaluator));
  for (std::size_t i = 0; i < plan.measurements.size(); ++i) {
    if (is_trip_point(design.measurements[i].kind) && std::isnan(nominal_values[i])) {
      throw CircuitError("at nominal values, measurement '" + design.measurements[i].name +
                         "' has no trip point: the source '" + design.measurements[i].inputs[0] +
                         "' does not move the inputs of op-amp '" + design.measurements[i].opamp +
                         "'");
    }
  }
  // Each sample's bandwidth search starts from the nominal bandwidth.
  for (std::size_t i = 0; i < plan.measurements.size(); ++i) {
    if (plan.measurements[i].kind == MeasurementKind::bandwidth) {
      plan.measurements[i].nominal_bandwidth = nominal_values[i];
    }
  }
  for (const auto& spec : design.specs) {
    for (std::size_t i = 0; i < design.measurements.size(); ++i) {
      if (design.measurements[i].name == spec.measurement) spec_measurement.push_back(i);
    }
  }
}

Study::Study(Design design) : impl_(std::make_unique<Impl>(std::move(design))) {}
Study::~Study() = default;
Study::Study(Study&&) noexcept = default;
Study& Study::operator=(Study&&) noexcept = default;

const Design& Study::design() const { return impl_->design; }
const Network& Study::network() const { return impl_->network; }

std::vector<std::string> Study::parameter_names() const {
  std::vector<std::string> names;
  for (const auto& p : impl_->design.circuit.parameters()) names.push_back(p.name);
  return names;
}

std::vector<double> Study::nominal_parameters() const { return impl_->nominal_parameters; }

std::vector<std::string> Study::varied_parameters() const {
  std::vector<std::string> names;
  for (const auto& e : impl_->model.entries()) {
    if (e.varies) names.push_back(impl_->design.circuit.parameters()[e.parameter].name);
  }
  return names;
}

std::vector<std::string> Study::coordinate_names() const {
  std::vector<std::string> names;
  for (const auto& c : impl_->model.coordinates()) names.push_back(c.name);
  return names;
}

const std::vector<double>& Study::nominal_values() const { return impl_->nominal_values; }

SampleStatus Study::evaluate(const std::vector<double>& parameters,
                             std::vector<double>& values) const {
  if (parameters.size() != impl_->nominal_parameters.size()) {
    throw Error("evaluate: expected " + std::to_string(impl_->nominal_parameters.size()) +
                " parameter values, got " + std::to_string(parameters.size()));
  }
  values.assign(impl_->design.measurements.size(), 0.0);
  detail::Evaluator evaluator(impl_->network, impl_->plan);
  switch (evaluator.evaluate(parameters.data(), values.data())) {
    case SolveStatus::ok:
      return evaluator.any_saturated() ? SampleStatus::saturated : SampleStatus::ok;
    case SolveStatus::singular: return SampleStatus::singular;
    case SolveStatus::invalid_value: return SampleStatus::invalid_value;
  }
  return SampleStatus::ok;
}

YieldResult Study::run(const RunOptions& options) const { return run_study(*impl_, options); }

YieldResult Study::run() const {
  RunOptions options;
  options.samples = impl_->design.run.samples;
  options.seed = impl_->design.run.seed;
  options.threads = impl_->design.run.threads;
  options.sampler = impl_->design.run.sampler;
  options.replicates = impl_->design.run.replicates;
  options.confidence = impl_->design.run.confidence;
  options.target_half_width = impl_->design.run.target_half_width;
  options.tolerance_digits = impl_->design.run.tolerance_digits;
  options.builds_per_lot = impl_->design.run.builds_per_lot;
  return run(options);
}

}  // namespace lotwise
