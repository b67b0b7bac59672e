// Statistics that stand on their own: binomial intervals, capability indices, the
// bounded-memory histogram, and the trade's preferred values and tolerance letters.
#include "bindings.hpp"

#include <cstdint>

namespace lotwise::python {
namespace {

IntervalMethod interval_method(const std::string& word) {
  return from_word<IntervalMethod, Error>(
      word, {IntervalMethod::clopper_pearson, IntervalMethod::wilson, IntervalMethod::jeffreys},
      "interval method");
}

void bind_intervals(py::module_& m) {
  m.def("clopper_pearson",
        [](std::uint64_t k, std::uint64_t n, double confidence) {
          return interval_tuple(clopper_pearson(k, n, confidence));
        },
        py::arg("k"), py::arg("n"), py::arg("confidence") = 0.95);
  m.def("wilson",
        [](std::uint64_t k, std::uint64_t n, double confidence) {
          return interval_tuple(wilson(k, n, confidence));
        },
        py::arg("k"), py::arg("n"), py::arg("confidence") = 0.95);
  m.def("jeffreys",
        [](std::uint64_t k, std::uint64_t n, double confidence) {
          return interval_tuple(jeffreys(k, n, confidence));
        },
        py::arg("k"), py::arg("n"), py::arg("confidence") = 0.95);
  m.def("clopper_pearson_upper", &clopper_pearson_upper, py::arg("k"), py::arg("n"),
        py::arg("confidence") = 0.95);
  m.def("binomial_interval",
        [](const std::string& method, std::uint64_t k, std::uint64_t n, double confidence) {
          return interval_tuple(binomial_interval(interval_method(method), k, n, confidence));
        },
        py::arg("method"), py::arg("k"), py::arg("n"), py::arg("confidence") = 0.95);
  m.def("capability",
        [](double lsl, double usl, double mean, double std_dev, std::uint64_t n,
           double confidence) {
          return capability_dict(capability(lsl, usl, mean, std_dev, n, confidence));
        },
        py::arg("lsl"), py::arg("usl"), py::arg("mean"), py::arg("std_dev"), py::arg("n"),
        py::arg("confidence") = 0.95);
  m.def("normal_fit_yield", &normal_fit_yield, py::arg("lsl"), py::arg("usl"), py::arg("mean"),
        py::arg("std_dev"));
}

void bind_histogram(py::module_& m) {
  py::class_<Histogram>(m, "Histogram",
                        "Fixed-bin histogram in bounded memory, with quantiles and coverage "
                        "intervals by interpolation within a bin.")
      .def(py::init<>())
      .def(py::init<double, double, std::size_t>(), py::arg("low"), py::arg("high"),
           py::arg("bins"))
      .def("add", py::overload_cast<double>(&Histogram::add), py::arg("x"))
      .def("add_many",
           [](Histogram& h, const DoubleArray& values) {
             const double* v = values.data();
             for (py::ssize_t i = 0; i < values.size(); ++i) h.add(v[i]);
           },
           py::arg("values"))
      .def("merge", &Histogram::merge, py::arg("other"))
      .def_property_readonly("has_range", &Histogram::has_range)
      .def_property_readonly("low", &Histogram::low)
      .def_property_readonly("high", &Histogram::high)
      .def_property_readonly("bins", &Histogram::bins)
      .def_property_readonly("below", &Histogram::below)
      .def_property_readonly("above", &Histogram::above)
      .def_property_readonly("total", &Histogram::total)
      // A read-only view of the counts, kept alive by the histogram.
      .def_property_readonly("counts",
                             [](py::object self) {
                               const auto& h = self.cast<const Histogram&>();
                               py::array_t<std::uint64_t> view(
                                   {static_cast<py::ssize_t>(h.counts().size())},
                                   {static_cast<py::ssize_t>(sizeof(std::uint64_t))},
                                   h.counts().data(), self);
                               view.attr("setflags")(py::arg("write") = false);
                               return view;
                             })
      .def("quantile", &Histogram::quantile, py::arg("p"))
      .def("coverage_interval",
           [](const Histogram& h, double coverage) {
             return interval_tuple(h.coverage_interval(coverage));
           },
           py::arg("coverage"))
      .def("coarsened", &Histogram::coarsened, py::arg("max_bins"))
      .def("copy", [](const Histogram& h) { return Histogram(h); });
}

void bind_preferred_values(py::module_& m) {
  m.def("series_decade",
        [](const std::string& series) { return copy_to_array(series_decade(series_word(series))); },
        py::arg("series"));
  m.def("preferred_values",
        [](const std::string& series, double low, double high) {
          return copy_to_array(preferred_values(series_word(series), low, high));
        },
        py::arg("series"), py::arg("low"), py::arg("high"));
  m.def("nearest_preferred",
        [](double value, const std::string& series) {
          return nearest_preferred(value, series_word(series));
        },
        py::arg("value"), py::arg("series"));
  m.def("is_preferred",
        [](double value, const std::string& series, double tolerance) {
          return is_preferred(value, series_word(series), tolerance);
        },
        py::arg("value"), py::arg("series"), py::arg("tolerance") = 1e-9);
  m.def("tolerance_of_letter",
        [](const std::string& code) { return tolerance_of_letter(code); }, py::arg("code"));
  m.def("letter_of_tolerance", &letter_of_tolerance, py::arg("fraction"));
}

}  // namespace

void bind_stats(py::module_& m) {
  bind_intervals(m);
  bind_histogram(m);
  bind_preferred_values(m);
}

}  // namespace lotwise::python
