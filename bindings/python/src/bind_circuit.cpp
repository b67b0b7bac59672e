// Building a design: the circuit, its variations, measurements and specs, the design
// file reader and engineering-notation numbers. Choices (op-amp model, distribution,
// measurement kind) cross the boundary as the same words the design file uses.
#include "bindings.hpp"

#include <initializer_list>
#include <limits>
#include <string>
#include <utility>
#include <vector>

namespace lotwise::python {
namespace {

// The enum value whose to_string() is `word`; otherwise a DesignError listing the words.
template <typename Enum>
Enum from_word(const std::string& word, std::initializer_list<Enum> all, const std::string& what) {
  std::string known;
  for (Enum e : all) {
    if (word == to_string(e)) return e;
    known += (known.empty() ? "" : ", ") + std::string(to_string(e));
  }
  throw DesignError("unknown " + what + " '" + word + "' (" + known + ")");
}

OpAmpModel opamp_model(const std::string& word) {
  return from_word(word, {OpAmpModel::ideal, OpAmpModel::finite_gain, OpAmpModel::single_pole},
                   "op-amp model");
}

Distribution distribution(const std::string& word) {
  return from_word(word, {Distribution::normal, Distribution::uniform}, "distribution");
}

MeasurementKind measurement_kind(const std::string& word) {
  return from_word(word,
                   {MeasurementKind::gain, MeasurementKind::differential_gain,
                    MeasurementKind::common_mode_gain, MeasurementKind::cmrr,
                    MeasurementKind::output_offset, MeasurementKind::input_offset,
                    MeasurementKind::node_voltage, MeasurementKind::bandwidth},
                   "measurement kind");
}

std::vector<std::string> element_names(const Design& d) {
  std::vector<std::string> names;
  for (const auto& e : d.circuit.elements()) names.push_back(e.name);
  return names;
}

std::vector<std::string> parameter_names(const Design& d) {
  std::vector<std::string> names;
  for (const auto& p : d.circuit.parameters()) names.push_back(p.name);
  return names;
}

}  // namespace

void bind_circuit(py::module_& m) {
  constexpr double inf = std::numeric_limits<double>::infinity();

  py::class_<Design>(m, "Design", "A design as written: circuit, variations, measurements, specs.")
      .def(py::init([](const std::string& title, const std::string& ground) {
             return Design{title, Circuit(ground), {}, {}, {}, {}};
           }),
           py::arg("title") = "", py::arg("ground") = "gnd")
      .def("copy", [](const Design& d) { return Design(d); })
      .def_readwrite("title", &Design::title)
      .def_property_readonly("ground", [](const Design& d) { return d.circuit.ground(); })
      .def_property(
          "samples", [](const Design& d) { return d.run.samples; },
          [](Design& d, std::uint64_t v) { d.run.samples = v; })
      .def_property(
          "seed", [](const Design& d) { return d.run.seed; },
          [](Design& d, std::uint64_t v) { d.run.seed = v; })
      .def_property(
          "threads", [](const Design& d) { return d.run.threads; },
          [](Design& d, unsigned v) { d.run.threads = v; })
      .def_property_readonly("element_names", &element_names)
      .def_property_readonly("parameter_names", &parameter_names)
      .def_property_readonly("nodes", [](const Design& d) { return d.circuit.nodes(); })
      .def_property_readonly("measurement_names",
                             [](const Design& d) {
                               std::vector<std::string> names;
                               for (const auto& x : d.measurements) names.push_back(x.name);
                               return names;
                             })
      .def("set_nominal",
           [](Design& d, const std::string& parameter, double value) {
             d.circuit.set_nominal(parameter, value);
           })
      .def("add_resistor",
           [](Design& d, const std::string& name, const std::string& a, const std::string& b,
              double v) { d.circuit.add_resistor(name, a, b, v); })
      .def("add_capacitor",
           [](Design& d, const std::string& name, const std::string& a, const std::string& b,
              double v) { d.circuit.add_capacitor(name, a, b, v); })
      .def("add_inductor",
           [](Design& d, const std::string& name, const std::string& a, const std::string& b,
              double v) { d.circuit.add_inductor(name, a, b, v); })
      .def("add_voltage_source",
           [](Design& d, const std::string& name, const std::string& plus,
              const std::string& minus, double v) {
             d.circuit.add_voltage_source(name, plus, minus, v);
           })
      .def("add_current_source",
           [](Design& d, const std::string& name, const std::string& from, const std::string& to,
              double v) { d.circuit.add_current_source(name, from, to, v); })
      .def("add_vcvs",
           [](Design& d, const std::string& name, const std::string& plus,
              const std::string& minus, const std::string& cp, const std::string& cn, double v) {
             d.circuit.add_vcvs(name, plus, minus, cp, cn, v);
           })
      .def("add_vccs",
           [](Design& d, const std::string& name, const std::string& from, const std::string& to,
              const std::string& cp, const std::string& cn, double v) {
             d.circuit.add_vccs(name, from, to, cp, cn, v);
           })
      .def("add_ccvs",
           [](Design& d, const std::string& name, const std::string& plus,
              const std::string& minus, const std::string& control, double v) {
             d.circuit.add_ccvs(name, plus, minus, control, v);
           })
      .def("add_cccs",
           [](Design& d, const std::string& name, const std::string& from, const std::string& to,
              const std::string& control, double v) {
             d.circuit.add_cccs(name, from, to, control, v);
           })
      .def("add_opamp",
           [](Design& d, const std::string& name, const std::string& plus,
              const std::string& minus, const std::string& output, const std::string& model,
              double open_loop_gain, double gain_bandwidth, double offset, double bias_plus,
              double bias_minus) {
             OpAmpSpec spec;
             spec.model = opamp_model(model);
             spec.open_loop_gain = open_loop_gain;
             spec.gain_bandwidth = gain_bandwidth;
             spec.offset = offset;
             spec.bias_plus = bias_plus;
             spec.bias_minus = bias_minus;
             d.circuit.add_opamp(name, plus, minus, output, spec);
           },
           py::arg("name"), py::arg("plus"), py::arg("minus"), py::arg("output"),
           py::arg("model"), py::arg("open_loop_gain"), py::arg("gain_bandwidth"),
           py::arg("offset"), py::arg("bias_plus"), py::arg("bias_minus"))
      // Variations, measurements and specs are checked against the circuit when the
      // design is compiled, as the C++ Study does.
      .def("add_variation",
           [](Design& d, std::vector<std::string> targets, double tolerance, bool relative,
              const std::string& dist, double sigmas) {
             Variation v;
             v.targets = std::move(targets);
             v.tolerance = tolerance;
             v.relative = relative;
             v.distribution = distribution(dist);
             v.sigmas = sigmas;
             d.variations.push_back(std::move(v));
           },
           py::arg("targets"), py::arg("tolerance"), py::arg("relative"),
           py::arg("distribution"), py::arg("sigmas"))
      .def("add_measurement",
           [](Design& d, const std::string& name, const std::string& kind,
              std::vector<std::string> inputs, std::vector<std::string> output,
              double frequency) {
             Measurement x;
             x.name = name;
             x.kind = measurement_kind(kind);
             x.inputs = std::move(inputs);
             x.output = std::move(output);
             x.frequency = frequency;
             d.measurements.push_back(std::move(x));
           },
           py::arg("name"), py::arg("kind"), py::arg("inputs"), py::arg("output"),
           py::arg("frequency"))
      .def("add_spec",
           [](Design& d, const std::string& measurement, double min, double max) {
             d.specs.push_back(Spec{measurement, min, max});
           },
           py::arg("measurement"), py::arg("min") = -inf, py::arg("max") = inf)
      .def_property_readonly("variations",
                             [](const Design& d) {
                               py::list out;
                               for (const auto& v : d.variations) {
                                 out.append(py::dict(
                                     py::arg("parameters") = v.targets,
                                     py::arg("tolerance") = v.tolerance,
                                     py::arg("relative") = v.relative,
                                     py::arg("distribution") = to_string(v.distribution),
                                     py::arg("sigmas") = v.sigmas));
                               }
                               return out;
                             })
      .def_property_readonly("specs", [](const Design& d) {
        py::list out;
        for (const auto& s : d.specs) {
          out.append(py::make_tuple(s.measurement, s.min, s.max));
        }
        return out;
      });

  m.def("load_design", &load_design, py::arg("path"));
  m.def("parse_design", &parse_design, py::arg("text"), py::arg("source_name") = "<design>");

  m.def("parse_value", [](const std::string& text) { return parse_value(text); }, py::arg("text"));
  m.def("parse_quantity",
        [](const std::string& text) {
          const Quantity q = parse_quantity(text);
          return py::make_tuple(q.value, q.relative);
        },
        py::arg("text"));
  m.def("format_si", &format_si, py::arg("value"), py::arg("digits") = 4);
}

}  // namespace lotwise::python
