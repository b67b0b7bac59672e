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
from ._analysis import (MeasurementWorstCase, ParameterTolerance, SweepAxis, SweepResult,
                        TransferCurve, WorstCaseResult)
from ._design import Design, load, parse
from ._numbers import (binomial_interval, clopper_pearson, clopper_pearson_upper, format_si,
                       is_preferred, jeffreys, letter_of_tolerance, nearest_preferred,
                       parse_quantity, parse_value, preferred_values, series_decade,
                       tolerance_of_letter, wilson)
from ._run import IncompleteRunWarning, SaturationWarning, StopToken
from ._stats import Capability, Histogram, capability, normal_fit_yield
from .report import ReportError, read_report
from ._study import (Evaluation, MeasurementStats, Result, SpecResult, Study,
                     TemperatureResult)

__version__: str = _core.__version__

# Submodules: plots (matplotlib) and distributed (Dask) import their libraries lazily.
from . import distributed, plots, report  # noqa: E402

__all__ = [
    "ReportError",
    "distributed",
    "plots",
    "read_report",
    "report",
    "Capability",
    "CircuitError",
    "Design",
    "DesignError",
    "Error",
    "Evaluation",
    "Histogram",
    "IncompleteRunWarning",
    "MeasurementStats",
    "MeasurementWorstCase",
    "ParameterTolerance",
    "Result",
    "RunError",
    "SaturationWarning",
    "SpecResult",
    "StopToken",
    "Study",
    "SweepAxis",
    "SweepResult",
    "TemperatureResult",
    "TransferCurve",
    "WorstCaseResult",
    "__version__",
    "binomial_interval",
    "capability",
    "clopper_pearson",
    "clopper_pearson_upper",
    "format_si",
    "is_preferred",
    "jeffreys",
    "letter_of_tolerance",
    "load",
    "nearest_preferred",
    "normal_fit_yield",
    "parse",
    "parse_quantity",
    "parse_value",
    "preferred_values",
    "series_decade",
    "tolerance_of_letter",
    "wilson",
]
