#pragma once
// Shared by every binding file and included first: pybind11 wants Python.h ahead of
// the standard headers.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cstdint>
#include <initializer_list>
#include <optional>
#include <string>
#include <vector>

#include "lotwise/lotwise.hpp"

namespace py = pybind11;

namespace lotwise::python {

// One function per area, called in this order from module.cpp.
void bind_errors(py::module_& m);
void bind_circuit(py::module_& m);
void bind_stats(py::module_& m);
void bind_study(py::module_& m);
void bind_analysis(py::module_& m);
void bind_chunked(py::module_& m);

// The enum value whose to_string() is `word`; otherwise an Error of type E listing the
// words. Choices cross the boundary as the words the design file uses.
template <typename Enum, typename E = DesignError>
Enum from_word(const std::string& word, std::initializer_list<Enum> all, const std::string& what) {
  std::string known;
  for (Enum e : all) {
    if (word == to_string(e)) return e;
    known += (known.empty() ? "" : ", ") + std::string(to_string(e));
  }
  throw E("unknown " + what + " '" + word + "' (" + known + ")");
}

Distribution distribution_word(const std::string& word, const std::string& what);
Sampler sampler_word(const std::string& word);
PreferredSeries series_word(const std::string& word);

// Run options from the keyword arguments of a run, each missing one taken from the
// design's run settings.
RunOptions run_options(const RunSettings& defaults, std::optional<std::uint64_t> samples,
                       std::optional<std::uint64_t> seed, std::optional<unsigned> threads,
                       std::uint32_t chunk_size, std::optional<double> confidence,
                       bool keep_samples, std::optional<std::string> sampler,
                       std::optional<std::uint32_t> replicates, std::uint32_t histogram_bins,
                       std::optional<double> target_half_width, bool attribution,
                       std::optional<std::uint32_t> tolerance_digits,
                       std::uint64_t regression_samples,
                       std::optional<std::uint64_t> builds_per_lot);

// An Interval as a (low, high) tuple.
inline py::tuple interval_tuple(const Interval& i) { return py::make_tuple(i.low, i.high); }

// A copy of `v` as a new numpy array.
py::array_t<double> copy_to_array(const std::vector<double>& v);

// A parameter vector from Python: one dimension, one value per circuit parameter.
using DoubleArray = py::array_t<double, py::array::c_style | py::array::forcecast>;
std::vector<double> parameter_vector(const Study& study, const DoubleArray& values);

// The summaries of a run as plain Python dicts (the pure-Python layer makes dataclasses).
py::dict capability_dict(const Capability& c);
py::dict spec_dict(const SpecSummary& s);
py::dict measurement_dict(const MeasurementSummary& s);
py::dict temperature_dict(const TemperatureResult& t);

}  // namespace lotwise::python
