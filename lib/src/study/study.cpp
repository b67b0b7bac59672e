#include "lotwise/study.hpp"

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

Study::Impl::Impl(Design d)
    : design(checked(std::move(d))),
      network(design.circuit),
      sampler(design.circuit, design.variations),
      plan(detail::make_plan(network, design.measurements)),
      nominal_parameters(nominal_of(design.circuit)),
      nominal_values(design.measurements.size()) {
  detail::Evaluator evaluator(network, plan);
  if (evaluator.evaluate(nominal_parameters.data(), nominal_values.data()) != SolveStatus::ok) {
    for (const auto& analysis : plan.analyses) {
      auto ws = network.make_workspace();
      const SolveStatus s = analysis.frequency == 0.0
                                ? network.factor_dc(nominal_parameters.data(), ws)
                                : network.factor_ac(nominal_parameters.data(), analysis.frequency, ws);
      if (s != SolveStatus::ok) {
        throw CircuitError("at nominal values, " +
                           network.diagnose_singular(nominal_parameters.data(), analysis.frequency));
      }
    }
    throw CircuitError("at nominal values, a bandwidth search met a singular frequency");
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
  for (const auto& c : impl_->sampler.coordinates()) {
    names.push_back(impl_->design.circuit.parameters()[c.parameter].name);
  }
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
    case SolveStatus::ok: return SampleStatus::ok;
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
  return run(options);
}

}  // namespace lotwise
