// Building a design: the circuit, its variations, measurements and specs, the design
// file reader and engineering-notation numbers. Choices (op-amp model, distribution,
// measurement kind) cross the boundary as the same words the design file uses.
#include "bindings.hpp"

#include <cstdint>
#include <initializer_list>
#include <limits>
#include <string>
#include <utility>
#include <vector>

namespace lotwise::python {
namespace {

OpAmpModel opamp_model(const std::string& word) {
  return from_word(word, {OpAmpModel::ideal, OpAmpModel::finite_gain, OpAmpModel::single_pole},
                   "op-amp model");
}

MeasurementKind measurement_kind(const std::string& word) {
  return from_word(word,
                   {MeasurementKind::gain, MeasurementKind::differential_gain,
                    MeasurementKind::common_mode_gain, MeasurementKind::cmrr,
                    MeasurementKind::output_offset, MeasurementKind::input_offset,
                    MeasurementKind::node_voltage, MeasurementKind::bandwidth,
                    MeasurementKind::phase, MeasurementKind::gain_error,
                    MeasurementKind::rising_threshold, MeasurementKind::falling_threshold,
                    MeasurementKind::hysteresis, MeasurementKind::threshold_centre,
                    MeasurementKind::output_high, MeasurementKind::output_low},
                   "measurement kind");
}

SweepSetting sweep_setting(const std::string& word) {
  return from_word(word, {SweepSetting::nominal, SweepSetting::tolerance}, "sweep setting");
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

py::dict variation_dict(const Variation& v) {
  return py::dict(py::arg("parameters") = v.targets, py::arg("tolerance") = v.tolerance,
                  py::arg("relative") = v.relative,
                  py::arg("distribution") = to_string(v.distribution),
                  py::arg("sigmas") = v.sigmas, py::arg("inner_tolerance") = v.inner_tolerance,
                  py::arg("lot_tolerance") = v.lot_tolerance,
                  py::arg("lot_distribution") = to_string(v.lot_distribution),
                  py::arg("ratio_tolerance") = v.ratio_tolerance, py::arg("tempco") = v.tempco,
                  py::arg("tempco_relative") = v.tempco_relative,
                  py::arg("tempco_tolerance") = v.tempco_tolerance,
                  py::arg("tempco_distribution") = to_string(v.tempco_distribution),
                  py::arg("tempco_tracking") = v.tempco_tracking);
}

py::dict measurement_description(const Measurement& x) {
  return py::dict(py::arg("name") = x.name, py::arg("kind") = to_string(x.kind),
                  py::arg("inputs") = x.inputs, py::arg("output") = x.output,
                  py::arg("frequency") = x.frequency, py::arg("target") = x.target,
                  py::arg("opamp") = x.opamp);
}

// The run settings a design carries, by the design file's [run] keys.
void bind_run_settings(py::class_<Design>& c) {
  c.def_property(
       "samples", [](const Design& d) { return d.run.samples; },
       [](Design& d, std::uint64_t v) { d.run.samples = v; })
      .def_property(
          "seed", [](const Design& d) { return d.run.seed; },
          [](Design& d, std::uint64_t v) { d.run.seed = v; })
      .def_property(
          "threads", [](const Design& d) { return d.run.threads; },
          [](Design& d, unsigned v) { d.run.threads = v; })
      .def_property(
          "sampler", [](const Design& d) { return std::string(to_string(d.run.sampler)); },
          [](Design& d, const std::string& v) { d.run.sampler = sampler_word(v); })
      .def_property(
          "replicates", [](const Design& d) { return d.run.replicates; },
          [](Design& d, std::uint32_t v) { d.run.replicates = v; })
      .def_property(
          "confidence", [](const Design& d) { return d.run.confidence; },
          [](Design& d, double v) {
            if (!(v > 0.0 && v < 1.0)) {
              throw RunError("the confidence level must lie strictly between 0 and 1");
            }
            d.run.confidence = v;
          })
      .def_property(
          "tolerance_digits", [](const Design& d) { return d.run.tolerance_digits; },
          [](Design& d, std::uint32_t v) {
            if (v > 3) throw RunError("tolerance_digits must be 0 (off), 1, 2 or 3");
            d.run.tolerance_digits = v;
          })
      .def_property(
          "builds_per_lot", [](const Design& d) { return d.run.builds_per_lot; },
          [](Design& d, std::uint64_t v) { d.run.builds_per_lot = v; })
      .def_property(
          "target_half_width", [](const Design& d) { return d.run.target_half_width; },
          [](Design& d, double v) {
            if (!(v >= 0.0 && v < 0.5)) {
              throw RunError("the target half-width must lie in [0, 0.5)");
            }
            d.run.target_half_width = v;
          });
}

// Correlations, operating temperature and sweep axes.
void bind_design_extras(py::class_<Design>& c) {
  c.def("add_correlation",
        [](Design& d, std::vector<std::string> parameters, double coefficient) {
          d.correlations.push_back(Correlation{std::move(parameters), coefficient});
        },
        py::arg("parameters"), py::arg("coefficient"))
      .def_property_readonly("correlations",
                             [](const Design& d) {
                               py::list out;
                               for (const auto& k : d.correlations) {
                                 out.append(py::dict(py::arg("parameters") = k.parameters,
                                                     py::arg("coefficient") = k.coefficient));
                               }
                               return out;
                             })
      .def("set_temperature",
           [](Design& d, double reference, std::vector<double> operating, bool drawn, double low,
              double high) {
             Temperature t;
             t.reference = reference;
             t.operating = std::move(operating);
             t.drawn = drawn;
             t.low = low;
             t.high = high;
             d.temperature = std::move(t);
           },
           py::arg("reference"), py::arg("operating"), py::arg("drawn"), py::arg("low"),
           py::arg("high"))
      .def_property_readonly("temperature",
                             [](const Design& d) {
                               const Temperature& t = d.temperature;
                               return py::dict(py::arg("reference") = t.reference,
                                               py::arg("operating") = t.operating,
                                               py::arg("drawn") = t.drawn,
                                               py::arg("low") = t.low, py::arg("high") = t.high);
                             })
      .def("add_sweep_axis",
           [](Design& d, const std::string& setting, const std::string& parameter,
              std::vector<double> values) {
             d.sweep.push_back(ParameterSweepAxis{sweep_setting(setting), parameter,
                                                  std::move(values)});
           },
           py::arg("setting"), py::arg("parameter"), py::arg("values"))
      .def("clear_sweep_axes", [](Design& d) { d.sweep.clear(); })
      .def_property_readonly("sweep_axes", [](const Design& d) {
        py::list out;
        for (const auto& a : d.sweep) {
          out.append(py::make_tuple(to_string(a.setting), a.parameter, a.values));
        }
        return out;
      });
}

}  // namespace

void bind_circuit(py::module_& m) {
  constexpr double inf = std::numeric_limits<double>::infinity();

  py::class_<Design> design(m, "Design",
                            "A design as written: circuit, variations, measurements, specs.");
  design
      .def(py::init([](const std::string& title, const std::string& ground) {
             return Design{title, Circuit(ground), {}, {}, {}, {}};
           }),
           py::arg("title") = "", py::arg("ground") = "gnd")
      .def("copy", [](const Design& d) { return Design(d); })
      .def_readwrite("title", &Design::title)
      .def_property_readonly("ground", [](const Design& d) { return d.circuit.ground(); })
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
              double bias_minus, double supply_high, double supply_low, double headroom_high,
              double headroom_low, double output_high, double output_low) {
             OpAmpSpec spec;
             spec.model = opamp_model(model);
             spec.open_loop_gain = open_loop_gain;
             spec.gain_bandwidth = gain_bandwidth;
             spec.offset = offset;
             spec.bias_plus = bias_plus;
             spec.bias_minus = bias_minus;
             spec.supply_high = supply_high;
             spec.supply_low = supply_low;
             spec.headroom_high = headroom_high;
             spec.headroom_low = headroom_low;
             spec.output_high = output_high;
             spec.output_low = output_low;
             d.circuit.add_opamp(name, plus, minus, output, spec);
           },
           py::arg("name"), py::arg("plus"), py::arg("minus"), py::arg("output"),
           py::arg("model"), py::arg("open_loop_gain"), py::arg("gain_bandwidth"),
           py::arg("offset"), py::arg("bias_plus"), py::arg("bias_minus"),
           py::arg("supply_high") = inf, py::arg("supply_low") = -inf,
           py::arg("headroom_high") = 0.0, py::arg("headroom_low") = 0.0,
           py::arg("output_high") = inf, py::arg("output_low") = -inf)
      // Variations, measurements and specs are checked against the circuit when the
      // design is compiled, as the C++ Study does.
      .def("add_variation",
           [](Design& d, std::vector<std::string> targets, double tolerance, bool relative,
              const std::string& dist, double sigmas, double inner_tolerance,
              double lot_tolerance, const std::string& lot_distribution, double ratio_tolerance,
              double tempco, bool tempco_relative, double tempco_tolerance,
              const std::string& tempco_distribution, double tempco_tracking) {
             Variation v;
             v.targets = std::move(targets);
             v.tolerance = tolerance;
             v.relative = relative;
             v.distribution = distribution_word(dist, "distribution");
             v.sigmas = sigmas;
             v.inner_tolerance = inner_tolerance;
             v.lot_tolerance = lot_tolerance;
             v.lot_distribution = distribution_word(lot_distribution, "lot_distribution");
             v.ratio_tolerance = ratio_tolerance;
             v.tempco = tempco;
             v.tempco_relative = tempco_relative;
             v.tempco_tolerance = tempco_tolerance;
             v.tempco_distribution = distribution_word(tempco_distribution, "tempco_distribution");
             v.tempco_tracking = tempco_tracking;
             d.variations.push_back(std::move(v));
           },
           py::arg("targets"), py::arg("tolerance"), py::arg("relative"),
           py::arg("distribution"), py::arg("sigmas"), py::arg("inner_tolerance") = 0.0,
           py::arg("lot_tolerance") = 0.0, py::arg("lot_distribution") = "normal",
           py::arg("ratio_tolerance") = 0.0, py::arg("tempco") = 0.0,
           py::arg("tempco_relative") = true, py::arg("tempco_tolerance") = 0.0,
           py::arg("tempco_distribution") = "uniform", py::arg("tempco_tracking") = 0.0)
      .def("add_measurement",
           [](Design& d, const std::string& name, const std::string& kind,
              std::vector<std::string> inputs, std::vector<std::string> output,
              double frequency, double target, const std::string& opamp) {
             Measurement x;
             x.name = name;
             x.kind = measurement_kind(kind);
             x.inputs = std::move(inputs);
             x.output = std::move(output);
             x.frequency = frequency;
             x.target = target;
             x.opamp = opamp;
             d.measurements.push_back(std::move(x));
           },
           py::arg("name"), py::arg("kind"), py::arg("inputs"), py::arg("output"),
           py::arg("frequency"), py::arg("target") = 0.0, py::arg("opamp") = "")
      .def_property_readonly("measurements",
                             [](const Design& d) {
                               py::list out;
                               for (const auto& x : d.measurements) {
                                 out.append(measurement_description(x));
                               }
                               return out;
                             })
      .def_property_readonly("opamps",
                             [](const Design& d) {
                               std::vector<std::string> names;
                               for (const auto& e : d.circuit.elements()) {
                                 if (e.kind == ElementKind::opamp) names.push_back(e.name);
                               }
                               return names;
                             })
      .def_property_readonly("parameters",
                             [](const Design& d) {
                               py::list out;
                               for (const auto& p : d.circuit.parameters()) {
                                 out.append(py::dict(py::arg("name") = p.name,
                                                     py::arg("nominal") = p.nominal,
                                                     py::arg("unit") = p.unit,
                                                     py::arg("positive") = p.positive));
                               }
                               return out;
                             })
      .def("add_spec",
           [](Design& d, const std::string& measurement, double min, double max) {
             d.specs.push_back(Spec{measurement, min, max});
           },
           py::arg("measurement"), py::arg("min") = -inf, py::arg("max") = inf)
      .def_property_readonly("variations",
                             [](const Design& d) {
                               py::list out;
                               for (const auto& v : d.variations) out.append(variation_dict(v));
                               return out;
                             })
      .def_property_readonly("specs", [](const Design& d) {
        py::list out;
        for (const auto& s : d.specs) {
          out.append(py::make_tuple(s.measurement, s.min, s.max));
        }
        return out;
      });
  bind_run_settings(design);
  bind_design_extras(design);

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
