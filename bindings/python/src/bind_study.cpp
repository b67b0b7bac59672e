// A compiled study, its runs and their results, and the binomial intervals behind the
// reported yields.
#include "bindings.hpp"

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <future>
#include <optional>
#include <set>
#include <string>
#include <vector>

namespace lotwise::python {
namespace {

using DoubleArray = py::array_t<double, py::array::c_style | py::array::forcecast>;

// A parameter vector from Python: one dimension, one value per circuit parameter.
std::vector<double> parameter_vector(const Study& study, const DoubleArray& values) {
  const std::size_t expected = study.design().circuit.parameters().size();
  if (values.ndim() != 1) {
    throw Error("expected a one-dimensional array of " + std::to_string(expected) +
                " parameter values, got " + std::to_string(values.ndim()) + " dimensions");
  }
  if (static_cast<std::size_t>(values.size()) != expected) {
    throw Error("expected " + std::to_string(expected) + " parameter values, got " +
                std::to_string(values.size()));
  }
  return std::vector<double>(values.data(), values.data() + values.size());
}

// Why `parameters` cannot be evaluated, as the error the caller should see.
[[noreturn]] void explain_failure(const Study& study, const std::vector<double>& parameters,
                                  SampleStatus status) {
  const auto& params = study.design().circuit.parameters();
  if (status == SampleStatus::invalid_value) {
    for (std::size_t i = 0; i < params.size(); ++i) {
      const double v = parameters[i];
      if (!std::isfinite(v) || (params[i].positive && !(v > 0.0))) {
        char shown[32];
        std::snprintf(shown, sizeof shown, "%g", v);
        throw DesignError("parameter '" + params[i].name + "': value " + shown +
                          " is outside its physical range" +
                          (params[i].positive ? " (must be finite and > 0)" : " (must be finite)"));
      }
    }
    throw DesignError("a parameter value is outside its physical range");
  }
  // Name the unknowns involved, from the first analysis that fails to factor.
  std::set<double> frequencies{0.0};
  for (const auto& x : study.design().measurements) frequencies.insert(x.frequency);
  const Network& network = study.network();
  auto ws = network.make_workspace();
  for (double f : frequencies) {
    const SolveStatus s = f == 0.0 ? network.factor_dc(parameters.data(), ws)
                                   : network.factor_ac(parameters.data(), f, ws);
    if (s != SolveStatus::ok) throw CircuitError(network.diagnose_singular(parameters.data(), f));
  }
  throw CircuitError("a bandwidth search met a frequency where the network is singular");
}

py::array_t<double> copy_to_array(const std::vector<double>& v) {
  py::array_t<double> out(static_cast<py::ssize_t>(v.size()));
  std::copy(v.begin(), v.end(), out.mutable_data());
  return out;
}

// Runs the study on a worker thread while this (Python) thread waits without the GIL,
// waking a few times a second to pass on Ctrl-C and to report progress.
YieldResult run(const Study& study, RunOptions options, const py::object& progress) {
  std::atomic<bool> stop{false};
  std::atomic<std::uint64_t> done{0};
  options.stop = &stop;
  // Called on the run's worker threads: only an atomic store, never Python.
  options.progress = [&done](std::uint64_t d, std::uint64_t) { done.store(d); };

  // Safe without the GIL: Study::run is const on an immutable, thread-safe study; the
  // Python caller holds a reference to it (the bound method's self) until we return;
  // `options`, `stop` and `done` live in this frame, which outlives the task because
  // every path below waits for it; and the run touches no Python object.
  std::future<YieldResult> task;
  {
    py::gil_scoped_release release;
    task = std::async(std::launch::async, [&study, &options] { return study.run(options); });
  }
  auto finish = [&] {
    stop.store(true);
    py::gil_scoped_release release;
    task.wait();
  };
  std::uint64_t reported = 0;
  for (;;) {
    bool ready = false;
    {
      py::gil_scoped_release release;
      ready = task.wait_for(std::chrono::milliseconds(100)) == std::future_status::ready;
    }
    if (PyErr_CheckSignals() != 0) {  // KeyboardInterrupt: stop the workers, then raise
      finish();
      throw py::error_already_set();
    }
    const std::uint64_t now = done.load();
    if (!progress.is_none() && now != reported) {
      reported = now;
      try {
        progress(now, options.samples);
      } catch (...) {
        finish();
        throw;
      }
    }
    if (ready) break;
  }
  return task.get();
}

py::dict measurement_dict(const MeasurementSummary& s) {
  return py::dict(py::arg("name") = s.name, py::arg("kind") = to_string(s.kind),
                  py::arg("unit") = unit_of(s.kind), py::arg("nominal") = s.nominal,
                  py::arg("mean") = s.stats.mean(), py::arg("std_dev") = s.stats.std_dev(),
                  py::arg("min") = s.stats.min(), py::arg("max") = s.stats.max(),
                  py::arg("count") = s.stats.count(),
                  py::arg("non_finite") = s.stats.non_finite());
}

py::dict spec_dict(const SpecSummary& s) {
  return py::dict(py::arg("measurement") = s.spec.measurement, py::arg("min") = s.spec.min,
                  py::arg("max") = s.spec.max, py::arg("passed") = s.passed,
                  py::arg("fraction") = s.fraction,
                  py::arg("interval") = py::make_tuple(s.interval.low, s.interval.high));
}

}  // namespace

void bind_study(py::module_& m) {
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
                             [](const YieldResult& r) {
                               return py::make_tuple(r.interval.low, r.interval.high);
                             })
      .def_readonly("singular", &YieldResult::singular)
      .def_readonly("invalid_values", &YieldResult::invalid_values)
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
      // Views into the result's own storage, read-only, each keeping the result alive
      // through the array's base object. Empty unless the run kept its samples.
      .def_property_readonly("values",
                             [](py::object self) {
                               const auto& r = self.cast<const YieldResult&>();
                               const auto columns = static_cast<py::ssize_t>(r.measurements.size());
                               const auto rows = static_cast<py::ssize_t>(r.pass.size());
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
        py::array view(py::dtype("bool"), {static_cast<py::ssize_t>(r.pass.size())}, {py::ssize_t{1}},
                       r.pass.data(), self);
        view.attr("setflags")(py::arg("write") = false);
        return view;
      });

  py::class_<Study>(m, "Study", "A design compiled for evaluation; immutable.")
      .def(py::init([](const Design& d) { return Study(d); }), py::arg("design"))
      .def_property_readonly("design", [](const Study& s) { return Design(s.design()); })
      .def_property_readonly("title", [](const Study& s) { return s.design().title; })
      .def_property_readonly("parameter_names", &Study::parameter_names)
      .def_property_readonly("nominal_parameters",
                             [](const Study& s) { return copy_to_array(s.nominal_parameters()); })
      .def_property_readonly("varied_parameters", &Study::varied_parameters)
      .def_property_readonly("measurement_names",
                             [](const Study& s) {
                               std::vector<std::string> names;
                               for (const auto& x : s.design().measurements) names.push_back(x.name);
                               return names;
                             })
      .def_property_readonly("nominal_values",
                             [](const Study& s) { return copy_to_array(s.nominal_values()); })
      .def_property_readonly("nodes", [](const Study& s) { return s.design().circuit.nodes(); })
      .def("evaluate",
           [](const Study& s, const DoubleArray& parameters) {
             const std::vector<double> theta = parameter_vector(s, parameters);
             std::vector<double> values;
             const SampleStatus status = s.evaluate(theta, values);
             if (status != SampleStatus::ok) explain_failure(s, theta, status);
             return copy_to_array(values);
           },
           py::arg("parameters"))
      .def("operating_point",
           [](const Study& s, const DoubleArray& parameters) {
             const std::vector<double> theta = parameter_vector(s, parameters);
             return copy_to_array(s.network().operating_point(theta));
           },
           py::arg("parameters"))
      .def("run",
           [](const Study& s, std::optional<std::uint64_t> samples,
              std::optional<std::uint64_t> seed, std::optional<unsigned> threads,
              std::uint32_t chunk_size, double confidence, bool keep_samples,
              const py::object& progress) {
             RunOptions o;
             o.samples = samples.value_or(s.design().run.samples);
             o.seed = seed.value_or(s.design().run.seed);
             o.threads = threads.value_or(s.design().run.threads);
             o.chunk_size = chunk_size;
             o.confidence = confidence;
             o.keep_samples = keep_samples;
             return run(s, o, progress);
           },
           py::arg("samples") = py::none(), py::arg("seed") = py::none(),
           py::arg("threads") = py::none(), py::arg("chunk_size") = 1024,
           py::arg("confidence") = 0.95, py::arg("keep_samples") = false,
           py::arg("progress") = py::none())
      // Lambdas pick the (study, result) overloads; report_json has others since issue 5.
      .def(
          "report_json",
          [](const Study& s, const YieldResult& r) { return report_json(s, r); },
          py::arg("result"))
      .def(
          "summary_table",
          [](const Study& s, const YieldResult& r) { return summary_table(s, r); },
          py::arg("result"));

  m.def("clopper_pearson",
        [](std::uint64_t k, std::uint64_t n, double confidence) {
          const Interval i = clopper_pearson(k, n, confidence);
          return py::make_tuple(i.low, i.high);
        },
        py::arg("k"), py::arg("n"), py::arg("confidence") = 0.95);
  m.def("wilson",
        [](std::uint64_t k, std::uint64_t n, double confidence) {
          const Interval i = wilson(k, n, confidence);
          return py::make_tuple(i.low, i.high);
        },
        py::arg("k"), py::arg("n"), py::arg("confidence") = 0.95);
}

}  // namespace lotwise::python
