// lotwise._core: the compiled half of the lotwise Python package. The public API is the
// pure-Python package on top of it; nothing here is meant to be imported directly.
#include "bindings.hpp"

PYBIND11_MODULE(_core, m) {
  m.doc() = "Compiled core of lotwise; use the lotwise package instead.";
  m.attr("__version__") = lotwise::version();
  // Errors first: the other areas' docstrings and defaults may raise them.
  lotwise::python::bind_errors(m);
  lotwise::python::bind_circuit(m);
  lotwise::python::bind_stats(m);
  lotwise::python::bind_study(m);
  lotwise::python::bind_analysis(m);
  lotwise::python::bind_chunked(m);
}
