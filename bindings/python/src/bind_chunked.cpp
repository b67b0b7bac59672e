// Runs cut into chunks for other processes (lotwise.distributed): the run options as a
// picklable object, the evaluation of a range of chunks, and the merge in chunk order.
#include "bindings.hpp"

#include <cstdint>
#include <string>

namespace lotwise::python {
namespace {

py::bytes as_bytes(const std::string& s) { return py::bytes(s.data(), s.size()); }

// The options that shape a run's chunks; progress and stop stay with the caller.
py::tuple options_state(const RunOptions& o) {
  return py::make_tuple(o.samples, o.seed, o.chunk_size, o.confidence, o.keep_samples,
                        std::string(to_string(o.sampler)), o.replicates, o.histogram_bins,
                        o.target_half_width, o.attribution, o.tolerance_digits,
                        o.regression_samples, o.builds_per_lot);
}

RunOptions options_from_state(const py::tuple& t) {
  if (t.size() != 13) throw RunError("run options: expected 13 fields, got " + std::to_string(t.size()));
  RunOptions o;
  o.samples = t[0].cast<std::uint64_t>();
  o.seed = t[1].cast<std::uint64_t>();
  o.chunk_size = t[2].cast<std::uint32_t>();
  o.confidence = t[3].cast<double>();
  o.keep_samples = t[4].cast<bool>();
  o.sampler = sampler_word(t[5].cast<std::string>());
  o.replicates = t[6].cast<std::uint32_t>();
  o.histogram_bins = t[7].cast<std::uint32_t>();
  o.target_half_width = t[8].cast<double>();
  o.attribution = t[9].cast<bool>();
  o.tolerance_digits = t[10].cast<std::uint32_t>();
  o.regression_samples = t[11].cast<std::uint64_t>();
  o.builds_per_lot = t[12].cast<std::uint64_t>();
  return o;
}

}  // namespace

void bind_chunked(py::module_& m) {
  py::class_<RunOptions>(m, "RunOptions",
                         "How a run is carried out (the fields that shape its chunks).")
      .def(py::init<>())
      .def_readwrite("samples", &RunOptions::samples)
      .def_readwrite("seed", &RunOptions::seed)
      .def_readwrite("threads", &RunOptions::threads)
      .def_readwrite("chunk_size", &RunOptions::chunk_size)
      .def_readwrite("confidence", &RunOptions::confidence)
      .def_readwrite("keep_samples", &RunOptions::keep_samples)
      .def_property(
          "sampler", [](const RunOptions& o) { return std::string(to_string(o.sampler)); },
          [](RunOptions& o, const std::string& word) { o.sampler = sampler_word(word); })
      .def_readwrite("replicates", &RunOptions::replicates)
      .def_readwrite("histogram_bins", &RunOptions::histogram_bins)
      .def_readwrite("target_half_width", &RunOptions::target_half_width)
      .def_readwrite("attribution", &RunOptions::attribution)
      .def_readwrite("tolerance_digits", &RunOptions::tolerance_digits)
      .def_readwrite("regression_samples", &RunOptions::regression_samples)
      .def_readwrite("builds_per_lot", &RunOptions::builds_per_lot)
      .def(py::pickle([](const RunOptions& o) { return options_state(o); },
                      [](const py::tuple& t) { return options_from_state(t); }));

  py::class_<ChunkedRun>(m, "ChunkedRun",
                         "Merges pieces of a run, evaluated elsewhere, in chunk order.")
      .def(py::init<const Study&, const RunOptions&>(), py::arg("study"), py::arg("options"),
           py::keep_alive<1, 2>())
      .def_property_readonly("chunks", &ChunkedRun::chunks)
      .def_property_readonly("merged", &ChunkedRun::merged)
      .def_property_readonly("finished", &ChunkedRun::finished)
      .def_property_readonly("ready", &ChunkedRun::ready)
      .def("ranges", [](const ChunkedRun& r) { return as_bytes(r.ranges()); })
      .def(
          "add",
          [](ChunkedRun& r, const py::bytes& piece) {
            std::string data = piece;  // copied while the GIL is held
            py::gil_scoped_release release;
            r.add(data);
          },
          py::arg("piece"))
      .def("result", &ChunkedRun::result);

  m.def(
      "evaluate_chunks",
      [](const Study& study, const RunOptions& options, std::uint64_t first, std::uint64_t count,
         const py::bytes& ranges) {
        std::string r = ranges;
        std::string piece;
        {
          py::gil_scoped_release release;
          piece = evaluate_chunks(study, options, first, count, r);
        }
        return as_bytes(piece);
      },
      py::arg("study"), py::arg("options"), py::arg("first"), py::arg("count"),
      py::arg("ranges") = py::bytes());
}

}  // namespace lotwise::python
