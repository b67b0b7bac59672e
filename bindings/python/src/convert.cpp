// Conversions shared by the binding files: words to enums, parameter vectors, and a run's
// summaries as plain dicts for the pure-Python layer.
#include "bindings.hpp"

#include <algorithm>

namespace lotwise::python {

Distribution distribution_word(const std::string& word, const std::string& what) {
  return from_word(word,
                   {Distribution::normal, Distribution::uniform, Distribution::truncated_normal,
                    Distribution::triangular, Distribution::log_normal, Distribution::binned,
                    Distribution::fixed},
                   what);
}

Sampler sampler_word(const std::string& word) {
  return from_word<Sampler, RunError>(
      word, {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}, "sampler");
}

PreferredSeries series_word(const std::string& word) { return parse_series(word); }

py::array_t<double> copy_to_array(const std::vector<double>& v) {
  py::array_t<double> out(static_cast<py::ssize_t>(v.size()));
  std::copy(v.begin(), v.end(), out.mutable_data());
  return out;
}

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

py::dict capability_dict(const Capability& c) {
  return py::dict(py::arg("cp") = c.cp, py::arg("cpk") = c.cpk, py::arg("cpu") = c.cpu,
                  py::arg("cpl") = c.cpl, py::arg("cp_interval") = interval_tuple(c.cp_interval),
                  py::arg("cpk_interval") = interval_tuple(c.cpk_interval));
}

py::dict spec_dict(const SpecSummary& s) {
  return py::dict(py::arg("measurement") = s.spec.measurement, py::arg("min") = s.spec.min,
                  py::arg("max") = s.spec.max, py::arg("passed") = s.passed,
                  py::arg("fraction") = s.fraction,
                  py::arg("interval") = interval_tuple(s.interval),
                  py::arg("wilson_interval") = interval_tuple(s.wilson_interval),
                  py::arg("jeffreys_interval") = interval_tuple(s.jeffreys_interval),
                  py::arg("saturated") = s.saturated,
                  py::arg("standard_error") = s.standard_error,
                  py::arg("capability") = capability_dict(s.capability),
                  py::arg("normal_fit") = s.normal_fit,
                  py::arg("within_lot_capability") = capability_dict(s.within_lot_capability));
}

py::dict measurement_dict(const MeasurementSummary& s) {
  return py::dict(py::arg("name") = s.name, py::arg("kind") = to_string(s.kind),
                  py::arg("unit") = unit_of(s.kind), py::arg("nominal") = s.nominal,
                  py::arg("mean") = s.stats.mean(), py::arg("std_dev") = s.stats.std_dev(),
                  py::arg("min") = s.stats.min(), py::arg("max") = s.stats.max(),
                  py::arg("count") = s.stats.count(),
                  py::arg("non_finite") = s.stats.non_finite(),
                  py::arg("saturated") = s.saturated,
                  py::arg("mean_standard_error") = s.mean_standard_error,
                  py::arg("coverage") = interval_tuple(s.coverage),
                  py::arg("numerical_tolerance") = s.numerical_tolerance,
                  py::arg("within_lot_std_dev") = s.within_lot_std_dev,
                  py::arg("within_lot_dof") = s.within_lot_dof,
                  py::arg("histogram") = s.histogram);
}

py::dict temperature_dict(const TemperatureResult& t) {
  py::list specs, measurements;
  for (const auto& s : t.specs) specs.append(spec_dict(s));
  for (const auto& s : t.measurements) measurements.append(measurement_dict(s));
  return py::dict(py::arg("temperature") = t.temperature, py::arg("passed") = t.passed,
                  py::arg("yield_fraction") = t.yield,
                  py::arg("interval") = interval_tuple(t.interval),
                  py::arg("singular") = t.singular, py::arg("invalid_values") = t.invalid_values,
                  py::arg("saturated") = t.saturated, py::arg("specs") = specs,
                  py::arg("measurements") = measurements);
}

RunOptions run_options(const RunSettings& d, std::optional<std::uint64_t> samples,
                       std::optional<std::uint64_t> seed, std::optional<unsigned> threads,
                       std::uint32_t chunk_size, std::optional<double> confidence,
                       bool keep_samples, std::optional<std::string> sampler,
                       std::optional<std::uint32_t> replicates, std::uint32_t histogram_bins,
                       std::optional<double> target_half_width, bool attribution,
                       std::optional<std::uint32_t> tolerance_digits,
                       std::uint64_t regression_samples,
                       std::optional<std::uint64_t> builds_per_lot) {
  RunOptions o;
  o.samples = samples.value_or(d.samples);
  o.seed = seed.value_or(d.seed);
  o.threads = threads.value_or(d.threads);
  o.chunk_size = chunk_size;
  o.confidence = confidence.value_or(d.confidence);
  o.keep_samples = keep_samples;
  o.sampler = sampler ? sampler_word(*sampler) : d.sampler;
  o.replicates = replicates.value_or(d.replicates);
  o.histogram_bins = histogram_bins;
  o.target_half_width = target_half_width.value_or(d.target_half_width);
  o.attribution = attribution;
  o.tolerance_digits = tolerance_digits.value_or(d.tolerance_digits);
  o.regression_samples = regression_samples;
  o.builds_per_lot = builds_per_lot.value_or(d.builds_per_lot);
  return o;
}

}  // namespace lotwise::python
