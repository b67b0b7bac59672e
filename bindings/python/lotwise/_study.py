"""A compiled design, its Monte Carlo runs and their results."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Dict, List, Mapping, Optional, Sequence, Tuple, Union

import numpy as np

from . import _core
from ._design import Design, _value, _whole

__all__ = ["MeasurementStats", "Result", "SpecResult", "Study"]

ProgressCallback = Callable[[int, int], object]


@dataclass(frozen=True)
class SpecResult:
    """How often one spec was met.

    Attributes
    ----------
    measurement : str
        The measurement it limits.
    min, max : float or None
        Its limits; None where it has none.
    passed : int
        Builds that met it.
    fraction : float
        ``passed / samples``.
    interval : (float, float)
        Clopper-Pearson interval of the fraction at the run's confidence level.
    """

    measurement: str
    min: Optional[float]
    max: Optional[float]
    passed: int
    fraction: float
    interval: Tuple[float, float]


@dataclass(frozen=True)
class MeasurementStats:
    """Spread of one measurement over the builds that could be evaluated.

    Attributes
    ----------
    name, kind, unit : str
        The measurement, its kind and unit ("V/V", "dB", "V", "Hz").
    nominal : float
        Value with every part at nominal.
    mean, std_dev, min, max : float
        Over the finite values; ``std_dev`` has n - 1 in the denominator.
    count : int
        Finite values.
    non_finite : int
        Values that were +-inf or NaN (an unbounded CMRR, a gain that never falls 3 dB).
    """

    name: str
    kind: str
    unit: str
    nominal: float
    mean: float
    std_dev: float
    min: float
    max: float
    count: int
    non_finite: int


class Study:
    """A design compiled for evaluation: immutable and safe to share between threads.

    Made by :func:`lotwise.load`, :func:`lotwise.parse` or :meth:`Design.compile`.
    """

    def __init__(self, design: Design) -> None:
        if not isinstance(design, Design):
            raise TypeError(f"Study() takes a lotwise.Design, got {type(design).__name__}")
        self._core = _core.Study(design._core)

    @classmethod
    def _from_core(cls, core: "_core.Study") -> "Study":
        study = cls.__new__(cls)
        study._core = core
        return study

    @property
    def title(self) -> str:
        """The design's title."""
        return self._core.title

    @property
    def design(self) -> Design:
        """A copy of the design this study was compiled from, free to change."""
        return Design._wrap(self._core.design)

    @property
    def parameter_names(self) -> List[str]:
        """Parameter names, in the order :meth:`evaluate` expects values."""
        return self._core.parameter_names

    @property
    def nominal_parameters(self) -> np.ndarray:
        """Nominal parameter values (a new float64 array), in :attr:`parameter_names` order."""
        return self._core.nominal_parameters

    @property
    def varied_parameters(self) -> List[str]:
        """Names of the parameters that vary, one per random coordinate."""
        return self._core.varied_parameters

    @property
    def measurement_names(self) -> List[str]:
        """Measurement names, in the order of :attr:`Result.values` columns."""
        return self._core.measurement_names

    @property
    def nodes(self) -> List[str]:
        """Node names in order of first use, ground excluded."""
        return self._core.nodes

    @property
    def nominal_values(self) -> Dict[str, float]:
        """Each measurement with every parameter at nominal."""
        return dict(zip(self.measurement_names, self._core.nominal_values.tolist()))

    def _parameters(self, parameters: Union[Mapping[str, float], Sequence[float], np.ndarray]) -> np.ndarray:
        if isinstance(parameters, Mapping):
            theta = self.nominal_parameters
            index = {name: i for i, name in enumerate(self.parameter_names)}
            for name, value in parameters.items():
                if name not in index:
                    raise _core.DesignError(
                        f"no parameter called '{name}' (parameters: {', '.join(self.parameter_names)})"
                    )
                theta[index[name]] = _value(value, f"parameter '{name}'")
            return theta
        return np.asarray(parameters, dtype=np.float64)

    def evaluate(self, parameters: Union[Mapping[str, float], Sequence[float], np.ndarray]) -> Dict[str, float]:
        """Evaluate every measurement for one set of parameter values.

        Parameters
        ----------
        parameters : mapping or array_like
            Either a full vector in :attr:`parameter_names` order, or a mapping from
            parameter names to values (numbers or text such as "4.99k") that replaces
            those nominal values only.

        Returns
        -------
        dict
            Measurement name to value.

        Raises
        ------
        Error
            The vector has the wrong length or shape.
        DesignError
            A value is outside its physical range (a resistance <= 0, ...).
        CircuitError
            The network is singular for these values; the message names the unknowns.
        """
        values = self._core.evaluate(self._parameters(parameters))
        return dict(zip(self.measurement_names, values.tolist()))

    def operating_point(
        self, parameters: Union[Mapping[str, float], Sequence[float], np.ndarray, None] = None
    ) -> Dict[str, float]:
        """DC node voltages, with every source at its value.

        Parameters
        ----------
        parameters : mapping or array_like, optional
            As for :meth:`evaluate`; nominal values if not given.

        Returns
        -------
        dict
            Node name to voltage; ground is left out.
        """
        theta = self.nominal_parameters if parameters is None else self._parameters(parameters)
        return dict(zip(self.nodes, self._core.operating_point(theta).tolist()))

    def run(
        self,
        samples: Optional[int] = None,
        seed: Optional[int] = None,
        threads: Optional[int] = None,
        keep_samples: bool = False,
        confidence: float = 0.95,
        chunk_size: int = 1024,
        progress: Optional[ProgressCallback] = None,
    ) -> "Result":
        """Run the Monte Carlo yield analysis.

        Parameters
        ----------
        samples, seed, threads : int, optional
            Builds to draw, seed of the draws and worker threads (0: one per hardware
            thread); the design's ``[run]`` settings where not given. The answer does
            not depend on ``threads``.
        keep_samples : bool, optional
            Keep every build's measurement values and pass flag (memory grows with
            ``samples``); needed by :attr:`Result.values` and :meth:`Result.samples_of`.
        confidence : float, optional
            Confidence level of the reported intervals.
        chunk_size : int, optional
            Builds per chunk. Chunk k draws from a stream that depends only on
            (seed, k), so changing this changes the draws.
        progress : callable, optional
            Called as ``progress(done, total)`` on this thread a few times a second.
            An exception it raises stops the run and propagates.

        Returns
        -------
        Result

        Raises
        ------
        RunError
            A bad option (zero samples, a confidence level outside (0, 1)).
        KeyboardInterrupt
            On Ctrl-C; the workers are stopped first.

        Notes
        -----
        The run releases the GIL: other Python threads go on while it works.
        """
        result = self._core.run(
            samples=None if samples is None else _whole(samples, "samples", 1),
            seed=None if seed is None else _whole(seed, "seed", 0),
            threads=None if threads is None else _whole(threads, "threads", 0),
            chunk_size=_whole(chunk_size, "chunk_size", 1),
            confidence=float(confidence),
            keep_samples=bool(keep_samples),
            progress=progress,
        )
        return Result(self, result, bool(keep_samples))

    def __repr__(self) -> str:
        title = f" {self.title!r}" if self.title else ""
        return (
            f"<lotwise.Study{title}: {len(self.parameter_names)} parameters "
            f"({len(self.varied_parameters)} varied), measurements "
            f"{', '.join(self.measurement_names) or '(none)'}>"
        )


class Result:
    """The outcome of :meth:`Study.run`: yield, per-spec pass rates, measurement spread.

    Failing builds include those that could not be evaluated (:attr:`singular`,
    :attr:`invalid_values`).
    """

    def __init__(self, study: Study, core: "_core.YieldResult", kept: bool) -> None:
        self._study = study
        self._core = core
        self._kept = kept

    # -- the headline ------------------------------------------------------------------

    @property
    def yield_fraction(self) -> float:
        """Fraction of builds that met every spec (``passed / samples``)."""
        return self._core.yield_fraction

    @property
    def interval(self) -> Tuple[float, float]:
        """Clopper-Pearson interval of the yield at :attr:`confidence`."""
        return self._core.interval

    @property
    def passed(self) -> int:
        """Builds that met every spec."""
        return self._core.passed

    @property
    def samples(self) -> int:
        """Builds evaluated (fewer than :attr:`requested` if the run was stopped)."""
        return self._core.samples

    @property
    def requested(self) -> int:
        """Builds asked for."""
        return self._core.requested

    @property
    def complete(self) -> bool:
        """False if the run was stopped before every build was evaluated."""
        return self._core.complete

    @property
    def seed(self) -> int:
        """Seed of the draws."""
        return self._core.seed

    @property
    def confidence(self) -> float:
        """Confidence level of the intervals."""
        return self._core.confidence

    @property
    def singular(self) -> int:
        """Builds whose circuit matrix was singular (counted as failing)."""
        return self._core.singular

    @property
    def invalid_values(self) -> int:
        """Builds with a drawn value outside its physical range (counted as failing)."""
        return self._core.invalid_values

    @property
    def study(self) -> Study:
        """The study that was run."""
        return self._study

    # -- details -----------------------------------------------------------------------

    @property
    def specs(self) -> List[SpecResult]:
        """Pass rate of each spec, in the design's order."""
        out = []
        for s in self._core.specs:
            out.append(
                SpecResult(
                    measurement=s["measurement"],
                    min=None if math.isinf(s["min"]) else s["min"],
                    max=None if math.isinf(s["max"]) else s["max"],
                    passed=s["passed"],
                    fraction=s["fraction"],
                    interval=s["interval"],
                )
            )
        return out

    @property
    def measurements(self) -> Dict[str, MeasurementStats]:
        """Spread of each measurement, by name, in the design's order."""
        return {m["name"]: MeasurementStats(**m) for m in self._core.measurements}

    @property
    def measurement_names(self) -> List[str]:
        """Column names of :attr:`values`."""
        return self._study.measurement_names

    def _need_samples(self, what: str) -> None:
        if not self._kept:
            raise _core.Error(
                f"{what} needs the per-build values: run with keep_samples=True"
            )

    @property
    def values(self) -> np.ndarray:
        """Every build's measurements, shape (samples, measurements), read-only.

        A view into the result's own storage, not a copy; NaN where a build could not
        be evaluated. Needs ``keep_samples=True``.
        """
        self._need_samples("Result.values")
        return self._core.values

    @property
    def passes(self) -> np.ndarray:
        """Whether each build met every spec, shape (samples,), read-only bool view.

        Needs ``keep_samples=True``.
        """
        self._need_samples("Result.passes")
        return self._core.passes

    def samples_of(self, name: str) -> np.ndarray:
        """One measurement's value in every build (a read-only view).

        Raises
        ------
        Error
            If the run did not keep its samples, or no measurement has that name.
        """
        self._need_samples("Result.samples_of")
        names = self.measurement_names
        if name not in names:
            raise _core.Error(
                f"no measurement called '{name}' (measurements: {', '.join(names)})"
            )
        return self._core.values[:, names.index(name)]

    # -- presentation ------------------------------------------------------------------

    def to_json(self) -> str:
        """The report in lotwise's JSON schema ("lotwise.report", version 1)."""
        return self._study._core.report_json(self._core)

    def summary(self) -> str:
        """A plain-text table: yield with its interval, each spec and measurement."""
        return self._study._core.summary_table(self._core)

    def __repr__(self) -> str:
        low, high = self.interval
        state = "" if self.complete else f", stopped at {self.samples} of {self.requested}"
        return (
            f"<lotwise.Result yield={100 * self.yield_fraction:.2f} % "
            f"[{100 * low:.2f} %, {100 * high:.2f} %] ({self.passed} of {self.samples} builds, "
            f"seed {self.seed}{state})>"
        )

    def __str__(self) -> str:
        return self.summary()
