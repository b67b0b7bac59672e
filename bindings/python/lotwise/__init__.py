"""lotwise: production yield of op-amp circuits by Monte Carlo tolerance analysis.

Describe a circuit, how its parts spread from build to build, what to measure and the
limits each measurement must meet; lotwise draws builds, solves each one and reports the
fraction that meets every spec, with a confidence interval.

Two ways in:

>>> import lotwise
>>> study = lotwise.load("docs/examples/load_cell_amp_1pct.toml")  # doctest: +SKIP
>>> result = study.run(samples=5000, seed=1)  # doctest: +SKIP

or build the design in code with :class:`Design` and call :meth:`Design.compile`.
"""

try:
    from . import _core
except ImportError as _error:  # pragma: no cover - depends on how lotwise was installed
    raise ImportError(
        "lotwise could not import its compiled core (lotwise._core): "
        f"{_error}. Install the package with 'pip install .' from the source tree, or "
        "build it with CMake (-DLOTWISE_BUILD_PYTHON=ON) and put <build>/python on "
        "PYTHONPATH. Importing from the source folder bindings/python without a build "
        "does not work."
    ) from _error

from ._core import CircuitError, DesignError, Error, RunError
from ._design import Design, load, parse
from ._numbers import clopper_pearson, format_si, parse_quantity, parse_value, wilson
from ._study import MeasurementStats, Result, SpecResult, Study

__version__: str = _core.__version__

__all__ = [
    "CircuitError",
    "Design",
    "DesignError",
    "Error",
    "MeasurementStats",
    "Result",
    "RunError",
    "SpecResult",
    "Study",
    "__version__",
    "clopper_pearson",
    "format_si",
    "load",
    "parse",
    "parse_quantity",
    "parse_value",
    "wilson",
]
