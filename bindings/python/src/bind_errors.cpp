// The lotwise::Error hierarchy as Python exception classes. Messages pass through
// unchanged, so Python users read exactly what C++ users and the command line read.
#include "bindings.hpp"

#include <exception>

namespace lotwise::python {
namespace {

// Owned for the life of the interpreter: exception classes are never unloaded.
PyObject* error_type = nullptr;
PyObject* design_error_type = nullptr;
PyObject* circuit_error_type = nullptr;
PyObject* run_error_type = nullptr;

// A class named lotwise.<name> (so tracebacks show the public module), derived from
// `bases` (one class or a tuple of classes).
PyObject* make_type(py::module_& m, const char* name, const char* doc, PyObject* bases) {
  const std::string qualified = std::string("lotwise.") + name;
  PyObject* type = PyErr_NewExceptionWithDoc(qualified.c_str(), doc, bases, nullptr);
  if (type == nullptr) throw py::error_already_set();
  m.add_object(name, py::handle(type));  // the module takes its own reference
  return type;
}

}  // namespace

void bind_errors(py::module_& m) {
  error_type = make_type(m, "Error", "Base of every error lotwise raises on purpose.",
                         PyExc_Exception);
  // Bad input is also a ValueError, so generic handlers catch it.
  py::tuple design_bases = py::make_tuple(py::handle(error_type), py::handle(PyExc_ValueError));
  design_error_type = make_type(
      m, "DesignError",
      "A design (file or built in code) is malformed: unknown key, bad number, missing name.",
      design_bases.ptr());
  circuit_error_type = make_type(
      m, "CircuitError",
      "The circuit cannot be solved as drawn: floating node, loop of voltage sources, "
      "singular network at nominal values.",
      error_type);
  py::tuple run_bases = py::make_tuple(py::handle(error_type), py::handle(PyExc_ValueError));
  run_error_type = make_type(
      m, "RunError", "A run was asked for something it cannot do (zero samples, bad option).",
      run_bases.ptr());

  // Most derived first; anything else falls through to pybind11's own translators.
  py::register_local_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const DesignError& e) {
      PyErr_SetString(design_error_type, e.what());
    } catch (const CircuitError& e) {
      PyErr_SetString(circuit_error_type, e.what());
    } catch (const RunError& e) {
      PyErr_SetString(run_error_type, e.what());
    } catch (const Error& e) {
      PyErr_SetString(error_type, e.what());
    }
  });
}

}  // namespace lotwise::python
