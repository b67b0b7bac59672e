#pragma once
// Shared by every binding file and included first: pybind11 wants Python.h ahead of
// the standard headers.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <string>

#include "lotwise/lotwise.hpp"

namespace py = pybind11;

namespace lotwise::python {

// One function per area, called in this order from module.cpp.
void bind_errors(py::module_& m);
void bind_circuit(py::module_& m);
void bind_study(py::module_& m);

}  // namespace lotwise::python
