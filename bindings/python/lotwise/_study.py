"""A compiled design, its Monte Carlo runs and their results."""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import (TYPE_CHECKING, Any, Dict, List, Mapping, Optional, Sequence, Tuple,
                    Union)

import numpy as np

from . import _core
from ._design import Design, _amount, _axis, _axis_values, _value, _whole
from ._frames import pandas
from ._run import (Progress, SaturationWarning, StopToken, progress_callback, stop_core,
                   warn_incomplete)
from ._stats import Capability, Histogram, NanEqual

if TYPE_CHECKING:
    from ._analysis import SweepResult, TransferCurve, WorstCaseResult

__all__ = ["Evaluation", "MeasurementStats", "Result", "SpecResult", "Study", "TemperatureResult"]

Parameters = Union[Mapping[str, float], Sequence[float], np.ndarray]
Interval = Tuple[float, float]


def _limit(value: float) -> Optional[float]:
    return None if math.isinf(value) else value


@dataclass(frozen=True, eq=False)
class SpecResult(NanEqual):
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
    wilson_interval, jeffreys_interval : (float, float)
        The Wilson and Jeffreys intervals of the fraction.
    saturated : int
        Failures on builds whose measurement was withheld because an op-amp saturated.
    standard_error : float
        Standard error of ``fraction`` from the replicates (NaN with fewer than two).
    capability : Capability
        Cp, Cpk (here equal to Pp, Ppk: one population) with their intervals.
    normal_fit : float
        Fraction within the limits of a normal law with the measurement's mean and
        standard deviation, to set beside ``fraction``.
    within_lot_capability : Capability
        With ``builds_per_lot``: Cp, Cpk from the pooled within-lot spread; the gap to
        ``capability`` (Pp, Ppk) is what lot-to-lot shifts cost.
    """

    measurement: str
    min: Optional[float]
    max: Optional[float]
    passed: int
    fraction: float
    interval: Interval
    wilson_interval: Interval = (math.nan, math.nan)
    jeffreys_interval: Interval = (math.nan, math.nan)
    saturated: int = 0
    standard_error: float = math.nan
    capability: Capability = field(default_factory=Capability)
    normal_fit: float = math.nan
    within_lot_capability: Capability = field(default_factory=Capability)

    @classmethod
    def _from_core(cls, s: Mapping[str, Any]) -> "SpecResult":
        return cls(
            measurement=s["measurement"], min=_limit(s["min"]), max=_limit(s["max"]),
            passed=s["passed"], fraction=s["fraction"], interval=s["interval"],
            wilson_interval=s["wilson_interval"], jeffreys_interval=s["jeffreys_interval"],
            saturated=s["saturated"], standard_error=s["standard_error"],
            capability=Capability(**s["capability"]), normal_fit=s["normal_fit"],
            within_lot_capability=Capability(**s["within_lot_capability"]),
        )


@dataclass(frozen=True, eq=False)
class MeasurementStats(NanEqual):
    """Spread of one measurement over the builds that could be evaluated.

    Attributes
    ----------
    name, kind, unit : str
        The measurement, its kind and unit ("V/V", "dB", "V", "Hz", "deg").
    nominal : float
        Value with every part at nominal.
    mean, std_dev, min, max : float
        Over the finite values; ``std_dev`` has n - 1 in the denominator.
    count : int
        Finite values.
    non_finite : int
        Values that were +-inf or NaN (an unbounded CMRR, a gain that never falls 3 dB).
    saturated : int
        Builds whose value was withheld because an op-amp it relies on saturated.
    mean_standard_error : float
        Standard error of the mean from the replicates (NaN with fewer than two).
    coverage : (float, float)
        Probabilistically symmetric coverage interval at the run's confidence level
        (JCGM 101:2008, 7.7), from the histogram.
    numerical_tolerance : float
        Adaptive run by numerical tolerance (``tolerance_digits``): the tolerance of the
        standard deviation at the last batch (NaN otherwise).
    within_lot_std_dev, within_lot_dof : float, int
        With ``builds_per_lot``: the pooled within-lot standard deviation and its
        degrees of freedom (NaN and 0 otherwise).
    histogram : Histogram or None
        The values' distribution in bounded memory (None when the run kept none).
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
    saturated: int = 0
    mean_standard_error: float = math.nan
    coverage: Interval = (math.nan, math.nan)
    numerical_tolerance: float = math.nan
    within_lot_std_dev: float = math.nan
    within_lot_dof: int = 0
    histogram: Optional[Histogram] = None

    @classmethod
    def _from_core(cls, m: Mapping[str, Any]) -> "MeasurementStats":
        fields = dict(m)
        core_histogram = fields.pop("histogram")
        histogram = Histogram._wrap(core_histogram) if core_histogram.has_range else None
        return cls(histogram=histogram, **fields)

    def quantile(self, p: float) -> float:
        """The p-quantile of the values from the histogram (NaN without one, or outside
        its range); its error is below one bin width."""
        return math.nan if self.histogram is None else self.histogram.quantile(p)


@dataclass(frozen=True, eq=False)
class TemperatureResult(NanEqual):
    """The builds' results at one operating temperature of a sweep.

    Attributes
    ----------
    temperature : float
        Degrees Celsius.
    passed, yield_fraction, interval
        Builds meeting every spec at this temperature, their fraction and its
        Clopper-Pearson interval.
    singular, invalid_values, saturated : int
        Builds not evaluated (or withheld) at this temperature.
    specs : list of SpecResult
    measurements : dict of str to MeasurementStats
    """

    temperature: float
    passed: int
    yield_fraction: float
    interval: Interval
    singular: int
    invalid_values: int
    saturated: int
    specs: List[SpecResult]
    measurements: Dict[str, MeasurementStats]

    @classmethod
    def _from_core(cls, t: Mapping[str, Any]) -> "TemperatureResult":
        fields = dict(t)
        fields["specs"] = [SpecResult._from_core(s) for s in t["specs"]]
        fields["measurements"] = {m["name"]: MeasurementStats._from_core(m)
                                  for m in t["measurements"]}
        return cls(**fields)


@dataclass(frozen=True)
class Evaluation:
    """One build evaluated by :meth:`Study.evaluate_build`.

    Attributes
    ----------
    values : dict of str to float
        Each measurement; NaN where it was withheld.
    status : str
        ``"ok"`` or ``"saturated"``.
    saturated_opamps : list of str
        Op-amps found beyond their output limits at the operating point.
    withheld : list of str
        Measurements withheld (NaN) because an op-amp they rely on saturated.
    message : str
        What saturated and what was withheld, in words ("" when ok).
    """

    values: Dict[str, float]
    status: str
    saturated_opamps: List[str]
    withheld: List[str]
    message: str

    @property
    def saturated(self) -> bool:
        """True if an op-amp saturated and measurements were withheld."""
        return self.status == "saturated"


class Study:
    """A design compiled for evaluation: immutable and safe to share between threads.

    Made by :func:`lotwise.load`, :func:`lotwise.parse` or :meth:`Design.compile`.
    """

    def __init__(self, design: Design) -> None:
        if not isinstance(design, Design):
            raise TypeError(f"Study() takes a lotwise.Design, got {type(design).__name__}")
        self._core = _core.Study(design._core)
        self._design_source = design._source

    @classmethod
    def _from_core(cls, core: "_core.Study") -> "Study":
        study = cls.__new__(cls)
        study._core = core
        study._design_source = None
        return study

    @property
    def title(self) -> str:
        """The design's title."""
        return self._core.title

    @property
    def design(self) -> Design:
        """A copy of the design this study was compiled from, free to change."""
        return Design._wrap(self._core.design, self._design_source)

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

    @property
    def coordinate_names(self) -> List[str]:
        """Names of the random coordinates, in the order the samplers fill them: a
        part's own deviation ("R1"), shared ones ("lot of R*", "network of RN*"),
        coefficients ("R1.tempco"), a drawn temperature ("temperature")."""
        return self._core.coordinate_names

    @property
    def opamps(self) -> List[str]:
        """Names of the op-amps."""
        return self.design.opamps

    def evaluate(self, parameters: Parameters, on_saturation: str = "warn") -> Dict[str, float]:
        """Evaluate every measurement for one set of parameter values.

        Parameters
        ----------
        parameters : mapping or array_like
            Either a full vector in :attr:`parameter_names` order, or a mapping from
            parameter names to values (numbers or text such as "4.99k") that replaces
            those nominal values only.
        on_saturation : {"warn", "ignore", "raise"}
            What to do when an op-amp passes its output limits where a measurement
            assumes it linear: the measurements relying on it are NaN (withheld, as in
            a run) and a :class:`SaturationWarning` names the op-amp (``"warn"``, the
            default), or the NaNs come back silently (``"ignore"``; use
            :meth:`evaluate_build` to learn which op-amp), or a :class:`CircuitError`
            naming it is raised (``"raise"``).

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
            The network is singular for these values (the message names the unknowns
            and, for trip points, the held op-amp outputs), or an op-amp saturated and
            ``on_saturation="raise"``.
        """
        if on_saturation not in ("warn", "ignore", "raise"):
            raise ValueError(
                f"on_saturation must be 'warn', 'ignore' or 'raise', got {on_saturation!r}"
            )
        evaluation = self.evaluate_build(parameters)
        if evaluation.saturated:
            if on_saturation == "raise":
                raise _core.CircuitError(evaluation.message)
            if on_saturation == "warn":
                warnings.warn(SaturationWarning(evaluation.message), stacklevel=2)
        return evaluation.values

    def evaluate_build(self, parameters: Parameters) -> Evaluation:
        """Evaluate one build and say what saturated, without warning.

        Parameters and errors as for :meth:`evaluate` (a saturated build is not an
        error here: see :attr:`Evaluation.status`).
        """
        values, status, opamps, withheld, message = self._core.evaluate(
            self._parameters(parameters))
        return Evaluation(dict(zip(self.measurement_names, values.tolist())), status,
                          list(opamps), list(withheld), message)

    def output_limits(
        self, parameters: Optional[Parameters] = None
    ) -> Dict[str, Tuple[float, float]]:
        """Each op-amp's output range (low, high) in volts; +-inf on an unlimited side."""
        theta = self.nominal_parameters if parameters is None else self._parameters(parameters)
        return self._core.output_limits(theta)

    def operating_point(self, parameters: Optional[Parameters] = None) -> Dict[str, float]:
        """DC node voltages, with every source at its value and every op-amp linear.

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
        confidence: Optional[float] = None,
        chunk_size: int = 1024,
        progress: Progress = None,
        *,
        sampler: Optional[str] = None,
        replicates: Optional[int] = None,
        histogram_bins: int = 4096,
        target_half_width: Union[None, float, str] = None,
        attribution: bool = True,
        regression_samples: int = 10000,
        tolerance_digits: Optional[int] = None,
        builds_per_lot: Optional[int] = None,
        stop: Optional[StopToken] = None,
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
            ``samples``); needed by :attr:`Result.values`, :meth:`Result.samples_of`
            and :meth:`Result.samples_frame`.
        confidence : float, optional
            Confidence level of the reported intervals (the design's, 0.95 by default).
        chunk_size : int, optional
            Builds per chunk. Chunk k draws from a stream that depends only on
            (seed, k), so changing this changes the draws.
        progress : bool or callable, optional
            ``True`` shows a tqdm progress bar (``tqdm.auto``: a widget in notebooks,
            text in terminals; nothing if tqdm is not installed). A callable is called
            as ``progress(done, total)`` on this thread a few times a second; an
            exception it raises stops the run and propagates.
        sampler : {"monte_carlo", "sobol", "latin_hypercube"}, optional
            How the builds' random coordinates are chosen (the design's by default).
        replicates : int, optional
            Independent randomisations the samples are split into; their spread gives
            standard errors. 0 chooses 1 for monte_carlo and 16 for the others.
        histogram_bins : int, optional
            Bins of each measurement's histogram (quantiles, coverage intervals);
            0 keeps none.
        target_half_width : float or str, optional
            Adaptive run: stop at the first chunk where the yield's Clopper-Pearson
            interval has at most this half-width (0.005 or "0.5%"); ``samples`` is then
            the cap. Needs a single replicate.
        attribution : bool, optional
            Collect the correlations of parameters with measurements and the failing
            builds' parameter shifts (:meth:`Result.attribution_frame`).
        regression_samples : int, optional
            With attribution, the first this many builds also give standardized
            regression coefficients and rank correlations; 0 computes none.
        tolerance_digits : int, optional
            Adaptive run by numerical tolerance (JCGM 101:2008, 7.9): 1, 2 or 3
            significant digits of each measurement's standard deviation to settle, in
            batches; ``samples`` is the cap. 0 is off; the design's by default.
        builds_per_lot : int, optional
            Builds made from one lot (reel) of parts share every lot deviation;
            capability is then also reported within lots (Cp, Cpk beside Pp, Ppk).
            0: each build draws its own lot (the design's by default).
        stop : StopToken, optional
            Setting it from another thread stops the run at its next chunk.

        Returns
        -------
        Result
            On Ctrl-C (or a kernel interrupt) or a set ``stop``, the run stops within a
            fraction of a second and returns the builds evaluated so far: the result
            has ``complete`` False and an :class:`IncompleteRunWarning` is issued.

        Raises
        ------
        RunError
            A bad option (zero samples, a confidence level outside (0, 1)).

        Notes
        -----
        The run releases the GIL: other Python threads go on while it works.
        """
        callback, close = progress_callback(progress, self.title or "lotwise run")
        report = _core.RunReport()
        try:
            result = self._core.run(
                samples=None if samples is None else _whole(samples, "samples", 1),
                seed=None if seed is None else _whole(seed, "seed", 0),
                threads=None if threads is None else _whole(threads, "threads", 0),
                chunk_size=_whole(chunk_size, "chunk_size", 1),
                confidence=None if confidence is None else _value(confidence, "confidence"),
                keep_samples=bool(keep_samples),
                progress=callback,
                sampler=sampler,
                replicates=None if replicates is None else _whole(replicates, "replicates", 0),
                histogram_bins=_whole(histogram_bins, "histogram_bins", 0),
                target_half_width=_half_width(target_half_width),
                attribution=bool(attribution),
                tolerance_digits=None if tolerance_digits is None else _whole(
                    tolerance_digits, "tolerance_digits", 0),
                builds_per_lot=None if builds_per_lot is None else _whole(
                    builds_per_lot, "builds_per_lot", 0),
                regression_samples=_whole(regression_samples, "regression_samples", 0),
                stop=stop_core(stop),
                report=report,
            )
            early = result.complete and result.samples < result.requested  # adaptive stop
            if early and hasattr(callback, "finish"):
                callback.finish(result.samples)  # type: ignore[union-attr]
        except MemoryError:
            if not keep_samples:
                raise
            n = self._core.design.samples if samples is None else samples
            columns = len(self.measurement_names) + len(self.varied_parameters)
            raise MemoryError(
                f"keep_samples=True with {n} samples needs about {8 * n * columns / 1e9:.3g} GB "
                "for the per-build values; run fewer samples or without keep_samples"
            ) from None
        finally:
            close()
        warn_incomplete("the run was", report, result.complete, result.samples, result.requested)
        return Result(self, result, bool(keep_samples), interrupted=report.interrupted)

    def worst_case(
        self, max_exhaustive: int = 12, relative_step: float = 1e-3
    ) -> "WorstCaseResult":
        """Local sensitivities, extreme-value analysis, root-sum-square and corners.

        Parameters
        ----------
        max_exhaustive : int, optional
            Enumerate every corner when there are at most this many toleranced
            parameters (2^n solves).
        relative_step : float, optional
            Central-difference step as a fraction of each parameter's tolerance
            half-width.

        Returns
        -------
        WorstCaseResult

        Raises
        ------
        RunError
            A vertex cannot be evaluated (a singular circuit).
        """
        from ._analysis import WorstCaseResult

        core = _core.worst_case(self._core, _whole(max_exhaustive, "max_exhaustive", 0),
                                _value(relative_step, "relative_step"))
        return WorstCaseResult(self, core)

    def parameter_tolerances(self) -> "Any":
        """Each toleranced parameter's nominal, tolerance limits and standard deviation
        (the inputs of :meth:`worst_case`), as a list of ParameterTolerance."""
        from ._analysis import ParameterTolerance

        return [ParameterTolerance(**p) for p in _core.parameter_tolerances(self._core)]

    def sweep(
        self,
        *,
        nominal: Optional[Tuple[str, Sequence[Any]]] = None,
        tolerance: Optional[Tuple[str, Sequence[Any]]] = None,
        axes: Optional[Sequence[Tuple[str, str, Sequence[Any]]]] = None,
        samples: Optional[int] = None,
        seed: Optional[int] = None,
        threads: Optional[int] = None,
        confidence: Optional[float] = None,
        chunk_size: int = 1024,
        sampler: Optional[str] = None,
        replicates: Optional[int] = None,
        histogram_bins: int = 4096,
        attribution: bool = True,
        progress: Progress = None,
        stop: Optional[StopToken] = None,
    ) -> "SweepResult":
        """Yield and measurement statistics against one or two settings.

        Give the axes as ``nominal=("RG", ["1k", "2k"])`` and/or
        ``tolerance=("R*", ["0.1%", "1%"])`` (the nominal axis first when both are
        given), or as ``axes=[("tolerance", "R*", [...]), ("nominal", "RG", [...])]``;
        with none, the design's own sweep axes (:meth:`Design.sweep_axis`, the design
        file's ``[[sweep]]``). The first axis varies slowest. Each point runs with the
        same seed (common random numbers), so points differ by the setting alone.

        Run options, ``progress`` and ``stop`` are as for :meth:`run`; an interrupted
        sweep returns the points run so far, the rest with no samples, marked
        incomplete.

        Returns
        -------
        SweepResult
        """
        from ._analysis import SweepResult

        axis_list: List[Tuple[str, str, List[float]]] = []
        if axes is not None:
            if nominal is not None or tolerance is not None:
                raise TypeError("give axes= or nominal= / tolerance=, not both")
            for axis in axes:
                setting, parameter, values = axis
                if setting not in ("nominal", "tolerance"):
                    raise _core.DesignError(
                        f"unknown sweep setting '{setting}' (nominal, tolerance)")
                axis_list.append((setting, parameter, _axis_values(values, setting, parameter)))
        for key, given in (("nominal", nominal), ("tolerance", tolerance)):
            if given is None:
                continue
            parameter, values = given
            setting, parameter = _axis(parameter if key == "nominal" else None,
                                       parameter if key == "tolerance" else None)
            axis_list.append((setting, parameter, _axis_values(values, setting, parameter)))
        design = self._core.design
        if not axis_list and not design.sweep_axes:
            raise _core.DesignError(
                "sweep: give nominal=, tolerance= or axes=, or add sweep axes to the design")
        callback, close = progress_callback(progress, (self.title or "lotwise") + " sweep")
        report = _core.RunReport()
        try:
            core = _core.sweep_parameters(
                design, axis_list,
                samples=None if samples is None else _whole(samples, "samples", 1),
                seed=None if seed is None else _whole(seed, "seed", 0),
                threads=None if threads is None else _whole(threads, "threads", 0),
                chunk_size=_whole(chunk_size, "chunk_size", 1),
                confidence=None if confidence is None else _value(confidence, "confidence"),
                sampler=sampler,
                replicates=None if replicates is None else _whole(replicates, "replicates", 0),
                histogram_bins=_whole(histogram_bins, "histogram_bins", 0),
                attribution=bool(attribution),
                progress=callback, stop=stop_core(stop), report=report,
            )
        finally:
            close()
        sweep = SweepResult(self, core, interrupted=report.interrupted)
        done = sum(r.samples for _, r in sweep)
        warn_incomplete("the sweep was", report, sweep.complete, done,
                        sum(r.requested for _, r in sweep))
        return sweep

    def dc_sweep(
        self, source: str, output: Union[str, Sequence[str]], values: Sequence[float],
        parameters: Optional[Parameters] = None,
    ) -> "TransferCurve":
        """The saturating DC transfer curve: ``source`` swept up through ``values``
        (ascending) and back down, every op-amp linear within its output limits and
        clamped at them, following hysteresis.

        Parameters
        ----------
        source : str
            The voltage or current source to step.
        output : str or (str, str)
            Output node, or (plus, minus).
        values : sequence of float
            The source values, ascending.
        parameters : mapping or array_like, optional
            As for :meth:`evaluate`; nominal values if not given.

        Raises
        ------
        CircuitError
            No consistent op-amp state exists at a step (an oscillator).
        DesignError
            Unknown source or node.
        """
        from ._analysis import TransferCurve

        theta = None if parameters is None else self._parameters(parameters)
        out = [output] if isinstance(output, str) else list(output)
        return TransferCurve._from_core(_core.dc_sweep(
            self._core, source, out, np.asarray(values, dtype=np.float64).tolist(), theta))

    def dc_transfer(
        self, source: str, output: Union[str, Sequence[str]], path: Sequence[float],
        parameters: Optional[Parameters] = None,
    ) -> "TransferCurve":
        """Like :meth:`dc_sweep`, but stepping ``source`` through ``path`` in the order
        given (up and down as you choose); op-amp states carry from step to step."""
        from ._analysis import TransferCurve

        theta = None if parameters is None else self._parameters(parameters)
        out = [output] if isinstance(output, str) else list(output)
        return TransferCurve._from_core(_core.dc_transfer(
            self._core, source, out, np.asarray(path, dtype=np.float64).tolist(), theta))

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
    :attr:`invalid_values`) and those whose measurements were withheld because an
    op-amp saturated (:attr:`saturated`).
    """

    def __init__(self, study: Optional[Study], core: "_core.YieldResult", kept: bool,
                 interrupted: bool = False) -> None:
        self._study = study
        self._core = core
        self._kept = kept
        self._interrupted = interrupted

    # -- the headline ------------------------------------------------------------------

    @property
    def yield_fraction(self) -> float:
        """Fraction of builds that met every spec (``passed / samples``)."""
        return self._core.yield_fraction

    @property
    def interval(self) -> Interval:
        """Clopper-Pearson interval of the yield at :attr:`confidence`."""
        return self._core.interval

    @property
    def wilson_interval(self) -> Interval:
        """Wilson score interval of the yield at :attr:`confidence`."""
        return self._core.wilson_interval

    @property
    def jeffreys_interval(self) -> Interval:
        """Jeffreys interval of the yield at :attr:`confidence`."""
        return self._core.jeffreys_interval

    @property
    def failure_upper_bound(self) -> float:
        """One-sided exact upper bound on the failure fraction at :attr:`confidence`;
        with no failures 1 - (1 - confidence)^(1/n), about 3/n at 95 % (rule of three)."""
        return self._core.failure_upper_bound

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
        """False if the run was stopped before every build was evaluated (Ctrl-C, a
        :class:`StopToken`); an adaptive run that met its target is complete."""
        return self._core.complete

    @property
    def interrupted(self) -> bool:
        """True if Ctrl-C (or a kernel interrupt) stopped the run."""
        return self._interrupted

    @property
    def target_met(self) -> bool:
        """Adaptive run: True if it stopped because the interval target was met."""
        return self._core.target_met

    @property
    def seed(self) -> int:
        """Seed of the draws."""
        return self._core.seed

    @property
    def chunk_size(self) -> int:
        """Builds per chunk."""
        return self._core.chunk_size

    @property
    def confidence(self) -> float:
        """Confidence level of the intervals."""
        return self._core.confidence

    @property
    def sampler(self) -> str:
        """How the builds were drawn: monte_carlo, sobol or latin_hypercube."""
        return self._core.sampler

    @property
    def replicates(self) -> int:
        """Independent randomisations the samples were split into."""
        return self._core.replicates

    @property
    def yield_standard_error(self) -> float:
        """Standard error of the yield from the replicates' spread (NaN below two)."""
        return self._core.yield_standard_error

    @property
    def replicate_interval(self) -> Interval:
        """Student-t interval of the yield from the replicates (NaN below two). For
        sobol and latin_hypercube this, not :attr:`interval`, measures the sampling
        error."""
        return self._core.replicate_interval

    @property
    def singular(self) -> int:
        """Builds whose circuit matrix was singular (counted as failing)."""
        return self._core.singular

    @property
    def invalid_values(self) -> int:
        """Builds with a drawn value outside its physical range (counted as failing)."""
        return self._core.invalid_values

    @property
    def saturated(self) -> int:
        """Builds in which an op-amp passed its output limits where a measurement
        assumed it linear (their measurements withheld, counted as failing)."""
        return self._core.saturated

    @property
    def study(self) -> Optional[Study]:
        """The study that was run (None for a point of a sweep)."""
        return self._study

    # -- details -----------------------------------------------------------------------

    @property
    def specs(self) -> List[SpecResult]:
        """Pass rate, intervals and capability of each spec, in the design's order."""
        return [SpecResult._from_core(s) for s in self._core.specs]

    @property
    def measurements(self) -> Dict[str, MeasurementStats]:
        """Spread of each measurement, by name, in the design's order."""
        return {m["name"]: MeasurementStats._from_core(m) for m in self._core.measurements}

    @property
    def temperatures(self) -> List[TemperatureResult]:
        """With a list of operating temperatures: the results at each (else empty)."""
        return [TemperatureResult._from_core(t) for t in self._core.temperatures]

    @property
    def measurement_names(self) -> List[str]:
        """Column names of :attr:`values`."""
        if self._study is not None:
            return self._study.measurement_names
        return [m["name"] for m in self._core.measurements]

    @property
    def attribution_parameters(self) -> List[str]:
        """The varied parameters of :attr:`correlations` and the failure shifts."""
        return self._core.attribution_parameters

    @property
    def correlations(self) -> np.ndarray:
        """Sample correlation of each varied parameter with each measurement, shape
        (measurements, attribution_parameters); NaN where undefined. With independent
        parameters and a near-linear measurement, the standardized regression
        coefficient; its square is the parameter's share of the variance."""
        return self._core.correlations

    @property
    def standardized_regression(self) -> np.ndarray:
        """Standardized regression coefficients b_j s_j / s_y of a linear fit of each
        measurement on the varied parameters over the first ``regression_samples``
        builds, shape (measurements, attribution_parameters). Unlike
        :attr:`correlations` they stay right when parameters are correlated."""
        return self._core.standardized_regression

    @property
    def rank_correlations(self) -> np.ndarray:
        """Spearman rank correlations of each varied parameter with each measurement over
        the same builds, shape (measurements, attribution_parameters)."""
        return self._core.rank_correlations

    @property
    def regression_r_squared(self) -> Dict[str, float]:
        """Per measurement, the share of its variance the linear fit explains (R^2)."""
        return dict(zip(self.measurement_names, self._core.regression_r_squared.tolist()))

    @property
    def regression_rows(self) -> int:
        """Builds the regression and rank figures come from."""
        return self._core.regression_rows

    @property
    def builds_per_lot(self) -> int:
        """Builds per lot of the run (0: each build its own lot)."""
        return self._core.builds_per_lot

    @property
    def tolerance_batches(self) -> int:
        """Adaptive run by numerical tolerance: batches taken (0 when not used)."""
        return self._core.tolerance_batches

    @property
    def varied_parameters(self) -> List[str]:
        """The parameters variations move: the columns of :meth:`parameter_values`."""
        return self._core.varied_parameters

    def parameter_values(self, name: Optional[str] = None) -> np.ndarray:
        """Each row's value of the varied parameters (rows as in :attr:`values`), a
        read-only view: shape (rows, varied_parameters), or one column for ``name``.
        Needs ``keep_samples=True``."""
        self._need_samples("Result.parameter_values")
        values = self._core.parameter_values
        if name is None:
            return values
        names = self.varied_parameters
        if name not in names:
            raise _core.Error(
                f"no varied parameter called '{name}' (varied: {', '.join(names) or 'none'})"
            )
        return values[:, names.index(name)]

    @property
    def failure_shift(self) -> Dict[str, float]:
        """Per varied parameter: its mean in the failing builds minus its mean over all,
        in standard deviations of all builds (NaN with no failures)."""
        return dict(zip(self.attribution_parameters, self._core.failure_shift.tolist()))

    @property
    def failure_spread(self) -> Dict[str, float]:
        """Per varied parameter: the RMS distance of its value in the failing builds
        from its mean over all, in standard deviations (about 1 when it does not
        matter; above 1 when failing builds sit at its extremes)."""
        return dict(zip(self.attribution_parameters, self._core.failure_spread.tolist()))

    def _need_samples(self, what: str) -> None:
        if not self._kept:
            raise _core.Error(
                f"{what} needs the per-build values: run with keep_samples=True"
            )

    @property
    def values(self) -> np.ndarray:
        """Every build's measurements, shape (rows, measurements), read-only.

        A view into the result's own storage, not a copy; NaN where a build could not
        be evaluated or a measurement was withheld. One row per build, or with
        operating temperatures one per build and temperature (build-major). Needs
        ``keep_samples=True``.
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
        """One measurement's value in every row of :attr:`values` (a read-only view).

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

    # -- tables (pandas) -------------------------------------------------------------

    def samples_frame(self, parameters: bool = False) -> "Any":
        """Every build as a pandas DataFrame: one column per measurement and ``passed``.

        Indexed by ``build``; with operating temperatures by (``build``,
        ``temperature``), with ``passed`` the build's overall verdict. With
        ``parameters=True`` also one column per varied parameter. Needs
        ``keep_samples=True`` and pandas.
        """
        pd = pandas()
        self._need_samples("Result.samples_frame")
        values = self._core.values
        passes = self._core.passes
        names = self.measurement_names
        rows = values.shape[0]
        temperatures = [t["temperature"] for t in self._core.temperatures]
        if temperatures and rows == len(passes) * len(temperatures):
            index = pd.MultiIndex.from_product(
                [np.arange(len(passes)), temperatures], names=["build", "temperature"])
            passed = np.repeat(passes, len(temperatures))
        else:
            index = pd.RangeIndex(rows, name="build")
            passed = passes
        frame = pd.DataFrame(values, index=index, columns=names, copy=False)
        frame["passed"] = passed
        if parameters:
            theta = self._core.parameter_values
            for j, name in enumerate(self.varied_parameters):
                frame[name] = theta[:, j]
        return frame

    def specs_frame(self) -> "Any":
        """One row per spec (pandas): limits, pass fraction with its Clopper-Pearson,
        Wilson and Jeffreys intervals, saturated failures, capability and normal fit."""
        return _specs_frame(self.specs)

    def measurements_frame(self) -> "Any":
        """One row per measurement (pandas): nominal, mean, standard deviation, extremes,
        counts, standard error of the mean and coverage interval."""
        return _measurements_frame(self.measurements.values())

    def correlations_frame(self) -> "Any":
        """:attr:`correlations` as a pandas DataFrame, measurements by parameters."""
        pd = pandas()
        return pd.DataFrame(self.correlations,
                            index=pd.Index(self.measurement_names, name="measurement"),
                            columns=pd.Index(self.attribution_parameters, name="parameter"))

    def sensitivity_frame(self) -> "Any":
        """Global sensitivity per measurement and varied parameter (pandas, long form):
        ``correlation``, ``standardized_regression`` and ``rank_correlation``."""
        pd = pandas()
        rows = []
        names = self.attribution_parameters
        for i, m in enumerate(self.measurement_names):
            for j, p in enumerate(names):
                rows.append({"measurement": m, "parameter": p,
                             "correlation": self.correlations[i, j],
                             "standardized_regression": self.standardized_regression[i, j],
                             "rank_correlation": self.rank_correlations[i, j]})
        columns = ["measurement", "parameter", "correlation", "standardized_regression",
                   "rank_correlation"]
        return pd.DataFrame(rows, columns=columns).set_index(["measurement", "parameter"])

    def attribution_frame(self) -> "Any":
        """Failure attribution per varied parameter (pandas): ``failure_shift`` and
        ``failure_spread``, largest spread first."""
        pd = pandas()
        frame = pd.DataFrame({"failure_shift": self._core.failure_shift,
                              "failure_spread": self._core.failure_spread},
                             index=pd.Index(self.attribution_parameters, name="parameter"))
        return frame.sort_values("failure_spread", ascending=False, na_position="last")

    def temperatures_frame(self) -> "Any":
        """One row per operating temperature (pandas): yield with its interval and the
        builds not evaluated."""
        pd = pandas()
        rows = [{"temperature": t.temperature, "passed": t.passed,
                 "yield_fraction": t.yield_fraction, "low": t.interval[0],
                 "high": t.interval[1], "singular": t.singular,
                 "invalid_values": t.invalid_values, "saturated": t.saturated}
                for t in self.temperatures]
        columns = ["temperature", "passed", "yield_fraction", "low", "high", "singular",
                   "invalid_values", "saturated"]
        return pd.DataFrame(rows, columns=columns).set_index("temperature")

    # -- presentation ------------------------------------------------------------------

    def _need_study(self, what: str) -> Study:
        if self._study is None:
            raise _core.Error(
                f"{what}: this result is a point of a sweep; use the sweep's table() or "
                "to_frame(), or report the sweep with Result.to_json(sweep=...) of a run")
        return self._study

    def to_json(self, worst_case: Optional["WorstCaseResult"] = None,
                sweep: Optional["SweepResult"] = None) -> str:
        """The report in lotwise's JSON schema ("lotwise.report", version 1), with the
        optional worst-case and sweep sections (docs/report-format.md)."""
        study = self._need_study("Result.to_json")
        return study._core.report_json(
            self._core, worst_case=None if worst_case is None else worst_case._core,
            sweep=None if sweep is None else sweep._core)

    def write_report(self, path: Any, worst_case: Optional["WorstCaseResult"] = None,
                     sweep: Optional["SweepResult"] = None) -> None:
        """Write :meth:`to_json` to ``path`` atomically (never a partial file)."""
        import os

        study = self._need_study("Result.write_report")
        study._core.write_report(
            os.fspath(path), self._core,
            worst_case=None if worst_case is None else worst_case._core,
            sweep=None if sweep is None else sweep._core)

    def summary(self) -> str:
        """A plain-text table: yield with its interval, each spec and measurement."""
        return self._need_study("Result.summary")._core.summary_table(self._core)

    def __repr__(self) -> str:
        low, high = self.interval
        state = "" if self.complete else f", stopped at {self.samples} of {self.requested}"
        return (
            f"<lotwise.Result yield={100 * self.yield_fraction:.2f} % "
            f"[{100 * low:.2f} %, {100 * high:.2f} %] ({self.passed} of {self.samples} builds, "
            f"seed {self.seed}{state})>"
        )

    def __str__(self) -> str:
        if self._study is None:
            return repr(self)
        return self.summary()


def _specs_frame(specs: Sequence[SpecResult]) -> "Any":
    pd = pandas()
    rows = []
    for s in specs:
        c = s.capability
        rows.append({
            "measurement": s.measurement,
            "min": math.nan if s.min is None else s.min,
            "max": math.nan if s.max is None else s.max,
            "passed": s.passed, "fraction": s.fraction,
            "low": s.interval[0], "high": s.interval[1],
            "wilson_low": s.wilson_interval[0], "wilson_high": s.wilson_interval[1],
            "jeffreys_low": s.jeffreys_interval[0], "jeffreys_high": s.jeffreys_interval[1],
            "saturated": s.saturated, "standard_error": s.standard_error,
            "cp": c.cp, "cpk": c.cpk, "cpk_low": c.cpk_interval[0], "cpk_high": c.cpk_interval[1],
            "normal_fit": s.normal_fit,
        })
    columns = ["measurement", "min", "max", "passed", "fraction", "low", "high", "wilson_low",
               "wilson_high", "jeffreys_low", "jeffreys_high", "saturated", "standard_error",
               "cp", "cpk", "cpk_low", "cpk_high", "normal_fit"]
    return pd.DataFrame(rows, columns=columns)


def _measurements_frame(stats: Any) -> "Any":
    pd = pandas()
    rows = []
    for m in stats:
        rows.append({
            "name": m.name, "kind": m.kind, "unit": m.unit, "nominal": m.nominal,
            "mean": m.mean, "std_dev": m.std_dev, "min": m.min, "max": m.max,
            "count": m.count, "non_finite": m.non_finite, "saturated": m.saturated,
            "mean_standard_error": m.mean_standard_error,
            "coverage_low": m.coverage[0], "coverage_high": m.coverage[1],
        })
    columns = ["name", "kind", "unit", "nominal", "mean", "std_dev", "min", "max", "count",
               "non_finite", "saturated", "mean_standard_error", "coverage_low", "coverage_high"]
    return pd.DataFrame(rows, columns=columns).set_index("name")


def _half_width(value: Union[None, float, str]) -> Optional[float]:
    if value is None:
        return None
    if isinstance(value, str):
        return _amount(value, "target_half_width", True)[0]
    return _value(value, "target_half_width")
