// A compiled study, single evaluations, its runs and their results.
#include "bindings.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "run_control.hpp"

namespace lotwise::python {
namespace {

std::string shown(double v) {
  char text[32];
  std::snprintf(text, sizeof text, "%g", v);
  return text;
}

// Op-amps of the circuit, by element index.
std::vector<std::size_t> opamp_elements(const Circuit& circuit) {
  std::vector<std::size_t> out;
  for (std::size_t e = 0; e < circuit.elements().size(); ++e) {
    if (circuit.elements()[e].kind == ElementKind::opamp) out.push_back(e);
  }
  return out;
}

// The deciding op-amps of the trip-point measurements: the outputs their analysis holds.
std::vector<std::size_t> held_outputs(const Study& study) {
  std::set<std::size_t> held;
  const Circuit& circuit = study.design().circuit;
  for (const auto& x : study.design().measurements) {
    if (!is_trip_point(x.kind)) continue;
    const std::size_t e = circuit.find_element(x.opamp);
    if (e != Circuit::npos) held.insert(e);
  }
  return {held.begin(), held.end()};
}

// Why `parameters` cannot be evaluated, as the error the caller should see. Tries each
// analysis the study's measurements use: the all-linear DC network and the small-signal
// networks for the linear kinds, the DC network with the deciding op-amps held for the
// trip-point kinds.
[[noreturn]] void explain_failure(const Study& study, const std::vector<double>& parameters,
                                  SampleStatus status) {
  const auto& params = study.design().circuit.parameters();
  if (status == SampleStatus::invalid_value) {
    for (std::size_t i = 0; i < params.size(); ++i) {
      const double v = parameters[i];
      if (!std::isfinite(v) || (params[i].positive && !(v > 0.0))) {
        throw DesignError("parameter '" + params[i].name + "': value " + shown(v) +
                          " is outside its physical range" +
                          (params[i].positive ? " (must be finite and > 0)" : " (must be finite)"));
      }
    }
    const Circuit& circuit = study.design().circuit;
    for (std::size_t e : opamp_elements(circuit)) {
      const OutputLimits l = study.network().output_limits(parameters.data(), e);
      if (!(l.high > l.low)) {
        throw DesignError("op-amp '" + circuit.elements()[e].name + "': its high output limit " +
                          shown(l.high) + " V is not above its low output limit " +
                          shown(l.low) + " V");
      }
    }
    throw DesignError("a parameter value is outside its physical range");
  }
  bool linear = false;
  std::set<double> frequencies;
  for (const auto& x : study.design().measurements) {
    if (is_trip_point(x.kind)) continue;
    linear = true;
    if (x.frequency > 0.0) frequencies.insert(x.frequency);
  }
  const Network& network = study.network();
  auto ws = network.make_workspace();
  if (linear && network.factor_dc(parameters.data(), ws) != SolveStatus::ok) {
    throw CircuitError(network.diagnose_singular(parameters.data(), 0.0));
  }
  const std::vector<std::size_t> held = held_outputs(study);
  if (!held.empty() && network.factor_dc(parameters.data(), ws, held) != SolveStatus::ok) {
    throw CircuitError(network.diagnose_singular(parameters.data(), 0.0, held));
  }
  for (double f : frequencies) {
    if (network.factor_ac(parameters.data(), f, ws) != SolveStatus::ok) {
      throw CircuitError(network.diagnose_singular(parameters.data(), f));
    }
  }
  throw CircuitError("a bandwidth search met a frequency where the network is singular");
}

// The op-amps whose output lies beyond its limits at the all-linear operating point.
std::vector<std::string> saturated_at_operating_point(const Study& study,
                                                      const std::vector<double>& parameters) {
  std::vector<std::string> out;
  const Network& network = study.network();
  const Circuit& circuit = study.design().circuit;
  std::vector<double> op;
  try {
    op = network.operating_point(parameters);
  } catch (const CircuitError&) {
    return out;  // only the held (trip-point) network solves
  }
  for (std::size_t e : opamp_elements(circuit)) {
    const OutputLimits limits = network.output_limits(parameters.data(), e);
    const std::size_t node = network.node_index(circuit.elements()[e].nodes[2]);
    const double level = node == Network::npos ? 0.0 : op[node];
    if (level > limits.high || level < limits.low) out.push_back(circuit.elements()[e].name);
  }
  return out;
}

// One evaluation: (values, status, saturated op-amps, withheld measurements, message).
// Singular and invalid draws raise; a saturated one returns NaN for what it withheld.
py::tuple evaluate(const Study& s, const DoubleArray& parameters) {
  const std::vector<double> theta = parameter_vector(s, parameters);
  std::vector<double> values;
  const SampleStatus status = s.evaluate(theta, values);
  if (status == SampleStatus::singular || status == SampleStatus::invalid_value) {
    explain_failure(s, theta, status);
  }
  std::vector<std::string> opamps, withheld;
  std::string message;
  if (status == SampleStatus::saturated) {
    const auto& ms = s.design().measurements;
    bool linear_withheld = false;
    std::string trip;
    for (std::size_t i = 0; i < ms.size(); ++i) {
      if (!std::isnan(values[i])) continue;
      withheld.push_back(ms[i].name);
      if (is_trip_point(ms[i].kind)) {
        trip += (trip.empty() ? "'" : ", '") + ms[i].name + "' (op-amp '" + ms[i].opamp + "')";
      } else {
        linear_withheld = true;
      }
    }
    if (linear_withheld) opamps = saturated_at_operating_point(s, theta);
    std::string list;
    for (const auto& name : withheld) list += (list.empty() ? "'" : ", '") + name + "'";
    if (!opamps.empty()) {
      std::string amps;
      for (const auto& name : opamps) amps += (amps.empty() ? "'" : ", '") + name + "'";
      message = "op-amp " + amps + " saturated at the operating point";
    }
    if (!trip.empty()) {
      message += std::string(message.empty() ? "" : "; ") +
                 "an op-amp that sets the trip point of " + trip +
                 " would pass its output limits there";
    }
    message += ": measurements " + list + " withheld (NaN)";
  }
  const char* word = status == SampleStatus::saturated ? "saturated" : "ok";
  return py::make_tuple(copy_to_array(values), word, opamps, withheld, message);
}

// A rows x columns copy of a row-major vector (NaN-filled if the run left it empty).
py::array_t<double> matrix(const std::vector<double>& v, std::size_t rows, std::size_t columns) {
  py::array_t<double> out({static_cast<py::ssize_t>(rows), static_cast<py::ssize_t>(columns)});
  double* data = out.mutable_data();
  const std::size_t n = rows * columns;
  for (std::size_t i = 0; i < n; ++i) {
    data[i] = i < v.size() && v.size() == n ? v[i] : std::numeric_limits<double>::quiet_NaN();
  }
  return out;
}

void bind_run_control(py::module_& m) {
  py::class_<StopToken>(m, "StopToken",
                        "A flag another thread sets to stop a run at its next chunk.")
      .def(py::init<>())
      .def("set", &StopToken::set)
      .def("clear", &StopToken::clear)
      .def("is_set", &StopToken::is_set);
  py::class_<RunReport>(m, "RunReport", "Why a run ended early.")
      .def(py::init<>())
      .def_readonly("interrupted", &RunReport::interrupted)
      .def_readonly("stopped", &RunReport::stopped);
}

void bind_yield_result(py::module_& m) {
  py::class_<YieldResult>(m, "YieldResult", "What a yield run reports.")
      .def_readonly("samples", &YieldResult::samples)
      .def_readonly("requested", &YieldResult::requested)
      .def_readonly("seed", &YieldResult::seed)
      .def_readonly("chunk_size", &YieldResult::chunk_size)
      .def_readonly("complete", &YieldResult::complete)
      .def_readonly("confidence", &YieldResult::confidence)
      .def_readonly("passed", &YieldResult::passed)
      .def_readonly("yield_fraction", &YieldResult::yield)
      .def_property_readonly("interval",
                             [](const YieldResult& r) { return interval_tuple(r.interval); })
      .def_property_readonly("wilson_interval",
                             [](const YieldResult& r) { return interval_tuple(r.wilson_interval); })
      .def_property_readonly("jeffreys_interval",
                             [](const YieldResult& r) {
                               return interval_tuple(r.jeffreys_interval);
                             })
      .def_readonly("failure_upper_bound", &YieldResult::failure_upper_bound)
      .def_readonly("target_met", &YieldResult::target_met)
      .def_readonly("singular", &YieldResult::singular)
      .def_readonly("invalid_values", &YieldResult::invalid_values)
      .def_readonly("saturated", &YieldResult::saturated)
      .def_property_readonly("sampler",
                             [](const YieldResult& r) { return std::string(to_string(r.sampler)); })
      .def_readonly("replicates", &YieldResult::replicates)
      .def_readonly("yield_standard_error", &YieldResult::yield_standard_error)
      .def_property_readonly("replicate_interval",
                             [](const YieldResult& r) {
                               return interval_tuple(r.replicate_interval);
                             })
      .def_readonly("attribution_parameters", &YieldResult::attribution_parameters)
      // measurements x parameters; a copy (small).
      .def_property_readonly("correlations",
                             [](const YieldResult& r) {
                               return matrix(r.correlations, r.measurements.size(),
                                             r.attribution_parameters.size());
                             })
      .def_property_readonly("standardized_regression",
                             [](const YieldResult& r) {
                               return matrix(r.standardized_regression, r.measurements.size(),
                                             r.attribution_parameters.size());
                             })
      .def_property_readonly("rank_correlations",
                             [](const YieldResult& r) {
                               return matrix(r.rank_correlations, r.measurements.size(),
                                             r.attribution_parameters.size());
                             })
      .def_property_readonly("regression_r_squared",
                             [](const YieldResult& r) {
                               return copy_to_array(r.regression_r_squared);
                             })
      .def_readonly("regression_rows", &YieldResult::regression_rows)
      .def_readonly("tolerance_batches", &YieldResult::tolerance_batches)
      .def_readonly("builds_per_lot", &YieldResult::builds_per_lot)
      .def_readonly("varied_parameters", &YieldResult::varied_parameters)
      // rows x varied parameters, a read-only view like `values`.
      .def_property_readonly("parameter_values",
                             [](py::object self) {
                               const auto& r = self.cast<const YieldResult&>();
                               const auto columns =
                                   static_cast<py::ssize_t>(r.varied_parameters.size());
                               const auto size =
                                   static_cast<py::ssize_t>(r.parameter_values.size());
                               const auto rows = columns == 0 ? py::ssize_t{0} : size / columns;
                               const auto item = static_cast<py::ssize_t>(sizeof(double));
                               py::array_t<double> view({rows, columns}, {columns * item, item},
                                                        r.parameter_values.data(), self);
                               view.attr("setflags")(py::arg("write") = false);
                               return view;
                             })
      .def_property_readonly("failure_shift",
                             [](const YieldResult& r) { return copy_to_array(r.failure_shift); })
      .def_property_readonly("failure_spread",
                             [](const YieldResult& r) { return copy_to_array(r.failure_spread); })
      .def_property_readonly("specs",
                             [](const YieldResult& r) {
                               py::list out;
                               for (const auto& s : r.specs) out.append(spec_dict(s));
                               return out;
                             })
      .def_property_readonly("measurements",
                             [](const YieldResult& r) {
                               py::list out;
                               for (const auto& s : r.measurements) out.append(measurement_dict(s));
                               return out;
                             })
      .def_property_readonly("temperatures",
                             [](const YieldResult& r) {
                               py::list out;
                               for (const auto& t : r.temperatures) out.append(temperature_dict(t));
                               return out;
                             })
      // Views into the result's own storage, read-only, each keeping the result alive
      // through the array's base object. Empty unless the run kept its samples. With
      // operating temperatures there is one row per build and temperature, build-major.
      .def_property_readonly("values",
                             [](py::object self) {
                               const auto& r = self.cast<const YieldResult&>();
                               const auto columns = static_cast<py::ssize_t>(r.measurements.size());
                               const auto size = static_cast<py::ssize_t>(r.values.size());
                               const auto rows = columns == 0 ? py::ssize_t{0} : size / columns;
                               const auto item = static_cast<py::ssize_t>(sizeof(double));
                               py::array_t<double> view({rows, columns}, {columns * item, item},
                                                        r.values.data(), self);
                               view.attr("setflags")(py::arg("write") = false);
                               return view;
                             })
      .def_property_readonly("passes", [](py::object self) {
        const auto& r = self.cast<const YieldResult&>();
        static_assert(sizeof(std::uint8_t) == sizeof(bool), "numpy bool is one byte");
        // The flags are 0 or 1, which is exactly numpy's bool representation.
        py::array view(py::dtype("bool"), {static_cast<py::ssize_t>(r.pass.size())},
                       {py::ssize_t{1}}, r.pass.data(), self);
        view.attr("setflags")(py::arg("write") = false);
        return view;
      });
}

}  // namespace

void bind_study(py::module_& m) {
  bind_run_control(m);
  bind_yield_result(m);

  py::class_<Study>(m, "Study", "A design compiled for evaluation; immutable.")
      .def(py::init([](const Design& d) { return Study(d); }), py::arg("design"))
      .def_property_readonly("design", [](const Study& s) { return Design(s.design()); })
      .def_property_readonly("title", [](const Study& s) { return s.design().title; })
      .def_property_readonly("parameter_names", &Study::parameter_names)
      .def_property_readonly("nominal_parameters",
                             [](const Study& s) { return copy_to_array(s.nominal_parameters()); })
      .def_property_readonly("varied_parameters", &Study::varied_parameters)
      .def_property_readonly("coordinate_names", &Study::coordinate_names)
      .def_property_readonly("measurement_names",
                             [](const Study& s) {
                               std::vector<std::string> names;
                               for (const auto& x : s.design().measurements) {
                                 names.push_back(x.name);
                               }
                               return names;
                             })
      .def_property_readonly("nominal_values",
                             [](const Study& s) { return copy_to_array(s.nominal_values()); })
      .def_property_readonly("nodes", [](const Study& s) { return s.design().circuit.nodes(); })
      .def("evaluate", &evaluate, py::arg("parameters"))
      .def("operating_point",
           [](const Study& s, const DoubleArray& parameters) {
             const std::vector<double> theta = parameter_vector(s, parameters);
             return copy_to_array(s.network().operating_point(theta));
           },
           py::arg("parameters"))
      .def("output_limits",
           [](const Study& s, const DoubleArray& parameters) {
             const std::vector<double> theta = parameter_vector(s, parameters);
             const Circuit& circuit = s.design().circuit;
             py::dict out;
             for (std::size_t e : opamp_elements(circuit)) {
               const OutputLimits l = s.network().output_limits(theta.data(), e);
               out[py::str(circuit.elements()[e].name)] = py::make_tuple(l.low, l.high);
             }
             return out;
           },
           py::arg("parameters"))
      .def("run",
           [](const Study& s, std::optional<std::uint64_t> samples,
              std::optional<std::uint64_t> seed, std::optional<unsigned> threads,
              std::uint32_t chunk_size, std::optional<double> confidence, bool keep_samples,
              const py::object& progress, std::optional<std::string> sampler,
              std::optional<std::uint32_t> replicates, std::uint32_t histogram_bins,
              std::optional<double> target_half_width, bool attribution,
              std::optional<std::uint32_t> tolerance_digits, std::uint64_t regression_samples,
              std::optional<std::uint64_t> builds_per_lot, const StopToken* stop,
              RunReport* report) {
             RunOptions o = run_options(s.design().run, samples, seed, threads, chunk_size, confidence,
                                        keep_samples, sampler, replicates, histogram_bins,
                                        target_half_width, attribution, tolerance_digits,
                                        regression_samples, builds_per_lot);
             // The study is immutable and thread-safe; the caller (the bound method's
             // self) keeps it alive until we return.
             return run_controlled(o, progress, stop, report,
                                   [&s](const RunOptions& options) { return s.run(options); });
           },
           py::arg("samples") = py::none(), py::arg("seed") = py::none(),
           py::arg("threads") = py::none(), py::arg("chunk_size") = 1024,
           py::arg("confidence") = py::none(), py::arg("keep_samples") = false,
           py::arg("progress") = py::none(), py::arg("sampler") = py::none(),
           py::arg("replicates") = py::none(), py::arg("histogram_bins") = 4096,
           py::arg("target_half_width") = py::none(), py::arg("attribution") = true,
           py::arg("tolerance_digits") = py::none(), py::arg("regression_samples") = 10000,
           py::arg("builds_per_lot") = py::none(),
           py::arg("stop") = py::none(), py::arg("report") = py::none())
      .def(
          "report_json",
          [](const Study& s, const YieldResult& r, const WorstCaseResult* worst_case,
             const ParameterSweepResult* sweep) {
            return report_json(s, r, ReportSections{worst_case, sweep});
          },
          py::arg("result"), py::arg("worst_case") = py::none(), py::arg("sweep") = py::none())
      .def(
          "write_report",
          [](const Study& s, const std::string& path, const YieldResult& r,
             const WorstCaseResult* worst_case, const ParameterSweepResult* sweep) {
            write_report(path, s, r, ReportSections{worst_case, sweep});
          },
          py::arg("path"), py::arg("result"), py::arg("worst_case") = py::none(),
          py::arg("sweep") = py::none())
      .def(
          "summary_table",
          [](const Study& s, const YieldResult& r) { return summary_table(s, r); },
          py::arg("result"));
}

}  // namespace lotwise::python
