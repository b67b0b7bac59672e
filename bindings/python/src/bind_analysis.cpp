// Analyses beside the yield run: worst case (EVA, RSS, corners), parameter sweeps and the
// saturating DC transfer sweep.
#include "bindings.hpp"

#include <cstdint>
#include <optional>
#include <tuple>
#include <string>
#include <utility>
#include <vector>

#include "run_control.hpp"

namespace lotwise::python {
namespace {

SweepSetting sweep_setting(const std::string& word) {
  return from_word(word, {SweepSetting::nominal, SweepSetting::tolerance}, "sweep setting");
}

py::dict tolerance_dict(const ParameterTolerance& p) {
  return py::dict(py::arg("name") = p.name, py::arg("index") = p.index,
                  py::arg("nominal") = p.nominal, py::arg("low") = p.low,
                  py::arg("high") = p.high, py::arg("std_dev") = p.std_dev);
}

py::dict worst_case_dict(const MeasurementWorstCase& w) {
  return py::dict(py::arg("name") = w.name, py::arg("kind") = to_string(w.kind),
                  py::arg("unit") = unit_of(w.kind), py::arg("nominal") = w.nominal,
                  py::arg("sensitivities") = copy_to_array(w.sensitivities),
                  py::arg("through_common_mode") = w.through_common_mode,
                  py::arg("linear_low") = w.linear_low, py::arg("linear_high") = w.linear_high,
                  py::arg("low") = w.low, py::arg("high") = w.high,
                  py::arg("rss_std_dev") = w.rss_std_dev,
                  py::arg("rss_half_width") = w.rss_half_width,
                  py::arg("variance_shares") = copy_to_array(w.variance_shares),
                  py::arg("corner_low") = w.corner_low, py::arg("corner_high") = w.corner_high);
}

void bind_worst_case(py::module_& m) {
  py::class_<WorstCaseResult>(m, "WorstCaseResult",
                              "Sensitivities, extreme-value, RSS and corner figures.")
      .def_property_readonly("parameters",
                             [](const WorstCaseResult& w) {
                               py::list out;
                               for (const auto& p : w.parameters) out.append(tolerance_dict(p));
                               return out;
                             })
      .def_property_readonly("measurements",
                             [](const WorstCaseResult& w) {
                               py::list out;
                               for (const auto& x : w.measurements) out.append(worst_case_dict(x));
                               return out;
                             })
      .def_readonly("exhaustive", &WorstCaseResult::exhaustive)
      .def_readonly("corners", &WorstCaseResult::corners)
      .def("table",
           [](const WorstCaseResult& w, const YieldResult* monte_carlo) {
             return worst_case_table(w, monte_carlo);
           },
           py::arg("monte_carlo") = py::none());

  m.def("parameter_tolerances",
        [](const Study& s) {
          py::list out;
          for (const auto& p : parameter_tolerances(s)) out.append(tolerance_dict(p));
          return out;
        },
        py::arg("study"));
  m.def("worst_case",
        [](const Study& s, std::size_t max_exhaustive, double relative_step) {
          WorstCaseOptions o;
          o.max_exhaustive = max_exhaustive;
          o.relative_step = relative_step;
          py::gil_scoped_release release;  // at most 2^max_exhaustive solves; touches no Python
          return worst_case(s, o);
        },
        py::arg("study"), py::arg("max_exhaustive") = 12, py::arg("relative_step") = 1e-3);
}

void bind_parameter_sweep(py::module_& m) {
  py::class_<ParameterSweepResult>(m, "ParameterSweepResult",
                                   "Yield runs at every combination of one or two axes.")
      .def_property_readonly("axes",
                             [](const ParameterSweepResult& r) {
                               py::list out;
                               for (const auto& a : r.axes) {
                                 out.append(py::make_tuple(to_string(a.setting), a.parameter,
                                                           a.values));
                               }
                               return out;
                             })
      .def_property_readonly("size",
                             [](const ParameterSweepResult& r) { return r.points.size(); })
      .def("settings",
           [](const ParameterSweepResult& r, std::size_t i) { return r.points.at(i).settings; },
           py::arg("index"))
      // The point's result, kept alive by the sweep.
      .def(
          "result",
          [](const ParameterSweepResult& r, std::size_t i) -> const YieldResult& {
            return r.points.at(i).result;
          },
          py::arg("index"), py::return_value_policy::reference_internal)
      .def("table", [](const ParameterSweepResult& r) { return sweep_table(r); });

  m.def(
      "sweep_parameters",
      [](const Design& design, const std::vector<std::tuple<std::string, std::string,
                                                            std::vector<double>>>& axes,
         std::optional<std::uint64_t> samples, std::optional<std::uint64_t> seed,
         std::optional<unsigned> threads, std::uint32_t chunk_size,
         std::optional<double> confidence, std::optional<std::string> sampler,
         std::optional<std::uint32_t> replicates, std::uint32_t histogram_bins,
         bool attribution, std::uint64_t regression_samples,
         std::optional<std::uint64_t> builds_per_lot, const py::object& progress,
         const StopToken* stop, RunReport* report) {
        std::vector<ParameterSweepAxis> list;
        for (const auto& [setting, parameter, values] : axes) {
          list.push_back(ParameterSweepAxis{sweep_setting(setting), parameter, values});
        }
        if (list.empty()) list = design.sweep;
        // Each point runs to its sample count: no adaptive stop within a sweep.
        RunOptions o = run_options(design.run, samples, seed, threads, chunk_size, confidence,
                                   false, sampler, replicates, histogram_bins, 0.0,
                                   attribution, 0u, regression_samples, builds_per_lot);
        std::size_t points = 1;
        for (const auto& a : list) points *= a.values.size();
        // Progress over the whole sweep: each point's run counts from zero again.
        return run_controlled(o, progress, stop, report, [&](const RunOptions& options) {
          RunOptions each = options;
          std::uint64_t finished = 0, last = 0;
          each.progress = [&](std::uint64_t done, std::uint64_t total) {
            if (done <= last) ++finished;
            last = done;
            options.progress(finished * total + done, total * points);
          };
          return sweep_parameters(design, list, each);
        });
      },
      py::arg("design"), py::arg("axes"), py::arg("samples") = py::none(),
      py::arg("seed") = py::none(), py::arg("threads") = py::none(),
      py::arg("chunk_size") = 1024, py::arg("confidence") = py::none(),
      py::arg("sampler") = py::none(), py::arg("replicates") = py::none(),
      py::arg("histogram_bins") = 4096, py::arg("attribution") = true,
      py::arg("regression_samples") = 10000, py::arg("builds_per_lot") = py::none(),
      py::arg("progress") = py::none(),
      py::arg("stop") = py::none(), py::arg("report") = py::none());
}

py::dict curve_dict(const TransferCurve& c) {
  const auto n = static_cast<py::ssize_t>(c.points.size());
  const auto k = static_cast<py::ssize_t>(c.opamps.size());
  py::array_t<double> input(n), output(n);
  py::array_t<bool> rising(n);
  py::array_t<std::uint8_t> states({n, k});
  for (py::ssize_t i = 0; i < n; ++i) {
    const SweepPoint& p = c.points[static_cast<std::size_t>(i)];
    input.mutable_data()[i] = p.input;
    output.mutable_data()[i] = p.output;
    rising.mutable_data()[i] = p.direction == SweepDirection::up;
  }
  std::uint8_t* s = states.mutable_data();
  for (std::size_t i = 0; i < c.states.size(); ++i) s[i] = static_cast<std::uint8_t>(c.states[i]);
  py::list names;
  for (auto state : {OutputState::linear, OutputState::high, OutputState::low}) {
    names.append(to_string(state));
  }
  return py::dict(py::arg("source") = c.source, py::arg("output") = c.output,
                  py::arg("opamps") = c.opamps, py::arg("input") = input,
                  py::arg("value") = output, py::arg("rising") = rising,
                  py::arg("states") = states, py::arg("state_names") = names);
}

void bind_dc_sweep(py::module_& m) {
  m.def("dc_sweep",
        [](const Study& s, const std::string& source, const std::vector<std::string>& output,
           const std::vector<double>& values, std::optional<DoubleArray> parameters) {
          const std::vector<double> theta =
              parameters ? parameter_vector(s, *parameters) : s.nominal_parameters();
          return curve_dict(dc_sweep(s.network(), theta, source, output, values));
        },
        py::arg("study"), py::arg("source"), py::arg("output"), py::arg("values"),
        py::arg("parameters") = py::none());
  m.def("dc_transfer",
        [](const Study& s, const std::string& source, const std::vector<std::string>& output,
           const std::vector<double>& path, std::optional<DoubleArray> parameters) {
          const std::vector<double> theta =
              parameters ? parameter_vector(s, *parameters) : s.nominal_parameters();
          return curve_dict(dc_transfer(s.network(), theta, source, output, path));
        },
        py::arg("study"), py::arg("source"), py::arg("output"), py::arg("path"),
        py::arg("parameters") = py::none());
}

}  // namespace

void bind_analysis(py::module_& m) {
  bind_worst_case(m);
  bind_parameter_sweep(m);
  bind_dc_sweep(m);
}

}  // namespace lotwise::python
