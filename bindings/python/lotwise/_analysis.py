"""Analyses beside the yield run: worst case, parameter sweeps, DC transfer curves."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Dict, Iterator, List, Mapping, Optional, Tuple, Union

import numpy as np

from . import _core
from ._frames import pandas

if TYPE_CHECKING:
    from ._study import Result, Study

__all__ = ["MeasurementWorstCase", "ParameterTolerance", "SweepAxis", "SweepResult",
           "TransferCurve", "WorstCaseResult"]


@dataclass(frozen=True)
class ParameterTolerance:
    """The tolerance of one parameter a variation spreads, in the parameter's unit.

    Attributes
    ----------
    name : str
    index : int
        Position in :attr:`Study.parameter_names`.
    nominal : float
    low, high : float
        Tolerance limits (part and lot tolerance together).
    std_dev : float
        Standard deviation of the value, part and lot spreads combined.
    """

    name: str
    index: int
    nominal: float
    low: float
    high: float
    std_dev: float


@dataclass(frozen=True)
class MeasurementWorstCase:
    """Worst-case figures of one measurement (see :meth:`Study.worst_case`).

    Attributes
    ----------
    name, kind, unit : str
    nominal : float
    sensitivities : dict of str to float
        d(measurement)/d(parameter) at nominal (central differences); for cmrr, of the
        signed common-mode gain (``through_common_mode``).
    linear_low, linear_high : float
        First-order extremes (NaN for cmrr).
    low, high : float
        Extreme-value analysis: the measurement evaluated at the vertex its
        sensitivities point to.
    rss_std_dev, rss_half_width : float
        Root-sum-square standard deviation and tolerance half-width (NaN for cmrr).
    variance_shares : dict of str to float
        Each parameter's share of the first-order variance.
    corner_low, corner_high : float
        Smallest and largest over all corners (NaN when not enumerated).
    """

    name: str
    kind: str
    unit: str
    nominal: float
    sensitivities: Dict[str, float]
    through_common_mode: bool
    linear_low: float
    linear_high: float
    low: float
    high: float
    rss_std_dev: float
    rss_half_width: float
    variance_shares: Dict[str, float]
    corner_low: float
    corner_high: float


class WorstCaseResult:
    """Local sensitivities, extreme-value analysis (EVA), root-sum-square (RSS) and,
    with few parameters, every corner; made by :meth:`Study.worst_case`."""

    def __init__(self, study: "Study", core: "_core.WorstCaseResult") -> None:
        self._study = study
        self._core = core
        self.parameters: List[ParameterTolerance] = [
            ParameterTolerance(**p) for p in core.parameters]
        names = [p.name for p in self.parameters]
        self.measurements: Dict[str, MeasurementWorstCase] = {}
        for m in core.measurements:
            fields = dict(m)
            fields["sensitivities"] = dict(zip(names, m["sensitivities"].tolist()))
            fields["variance_shares"] = dict(zip(names, m["variance_shares"].tolist()))
            self.measurements[m["name"]] = MeasurementWorstCase(**fields)

    @property
    def exhaustive(self) -> bool:
        """True if every corner was evaluated."""
        return self._core.exhaustive

    @property
    def corners(self) -> int:
        """Corners evaluated."""
        return self._core.corners

    def table(self, monte_carlo: Optional["Result"] = None) -> str:
        """The figures as plain text, with a run's Monte Carlo quantiles beside them."""
        return self._core.table(None if monte_carlo is None else monte_carlo._core)

    def to_frame(self) -> "Any":
        """One row per measurement (pandas): nominal, EVA, linear, RSS and corner figures."""
        pd = pandas()
        columns = ["kind", "unit", "nominal", "low", "high", "linear_low", "linear_high",
                   "rss_std_dev", "rss_half_width", "corner_low", "corner_high"]
        rows = [{c: getattr(m, c) for c in columns} for m in self.measurements.values()]
        return pd.DataFrame(rows, columns=columns,
                            index=pd.Index(list(self.measurements), name="measurement"))

    def sensitivities_frame(self) -> "Any":
        """Sensitivities at nominal (pandas), measurements by parameters."""
        return self._by_parameter("sensitivities")

    def variance_shares_frame(self) -> "Any":
        """Each parameter's share of each measurement's first-order variance (pandas)."""
        return self._by_parameter("variance_shares")

    def _by_parameter(self, field: str) -> "Any":
        # One per-parameter mapping of every measurement, as measurements by parameters.
        pd = pandas()
        names = [p.name for p in self.parameters]
        rows = [[getattr(m, field)[n] for n in names] for m in self.measurements.values()]
        return pd.DataFrame(rows,
                            index=pd.Index(list(self.measurements), name="measurement"),
                            columns=pd.Index(names, name="parameter"))

    def __str__(self) -> str:
        return self.table()

    def __repr__(self) -> str:
        return (f"<lotwise.WorstCaseResult {len(self.parameters)} parameters, "
                f"{len(self.measurements)} measurements, "
                f"{'every corner' if self.exhaustive else 'no corners'}>")


@dataclass(frozen=True)
class SweepAxis:
    """One axis of a parameter sweep: ``setting`` ("nominal" or "tolerance") of the
    parameters ``parameter`` selects, stepped through ``values``."""

    setting: str
    parameter: str
    values: Tuple[float, ...]

    @property
    def label(self) -> str:
        """The axis name for tables and plots, e.g. "R* tolerance"."""
        return f"{self.parameter} {self.setting}"


class SweepResult:
    """Yield runs at every combination of one or two axes (:meth:`Study.sweep`).

    Iterating gives ``(setting, Result)`` pairs, the setting a float for one axis and a
    tuple for two, the first axis varying slowest; so ``lotwise.plots.yield_sweep``
    draws a one-axis sweep directly.
    """

    def __init__(self, study: "Study", core: "_core.ParameterSweepResult",
                 interrupted: bool = False) -> None:
        from ._study import Result

        self._study = study
        self._core = core
        self._interrupted = interrupted
        self.axes: List[SweepAxis] = [SweepAxis(s, p, tuple(v)) for s, p, v in core.axes]
        self._points: List[Tuple[Tuple[float, ...], Result]] = [
            (tuple(core.settings(i)), Result(None, core.result(i), False))
            for i in range(core.size)
        ]

    @property
    def points(self) -> List[Tuple[Tuple[float, ...], "Result"]]:
        """Every point as (settings, Result), settings one value per axis."""
        return list(self._points)

    def __iter__(self) -> Iterator[Tuple[Union[float, Tuple[float, ...]], "Result"]]:
        for settings, result in self._points:
            yield (settings[0] if len(settings) == 1 else settings), result

    def __len__(self) -> int:
        return len(self._points)

    @property
    def complete(self) -> bool:
        """False if the sweep was stopped before every point ran in full."""
        return all(r.complete for _, r in self._points)

    @property
    def interrupted(self) -> bool:
        """True if Ctrl-C (or a kernel interrupt) stopped the sweep."""
        return self._interrupted

    def table(self) -> str:
        """The sweep as plain text: yield, interval, each measurement's mean and sd."""
        return self._core.table()

    def to_frame(self) -> "Any":
        """One row per point (pandas): the axes' settings, yield with its Clopper-Pearson,
        Wilson and Jeffreys intervals, counts, and each measurement's mean and standard
        deviation (``NAME mean``, ``NAME std_dev``)."""
        pd = pandas()
        rows = []
        for settings, r in self._points:
            row: Dict[str, Any] = {a.label: v for a, v in zip(self.axes, settings)}
            row.update({
                "samples": r.samples, "passed": r.passed, "yield_fraction": r.yield_fraction,
                "low": r.interval[0], "high": r.interval[1],
                "wilson_low": r.wilson_interval[0], "wilson_high": r.wilson_interval[1],
                "jeffreys_low": r.jeffreys_interval[0], "jeffreys_high": r.jeffreys_interval[1],
                "saturated": r.saturated, "complete": r.complete,
            })
            for name, m in r.measurements.items():
                row[f"{name} mean"] = m.mean
                row[f"{name} std_dev"] = m.std_dev
            rows.append(row)
        return pd.DataFrame(rows)

    def __repr__(self) -> str:
        axes = " x ".join(f"{a.label} ({len(a.values)})" for a in self.axes)
        return f"<lotwise.SweepResult {axes}: {len(self)} points>"


@dataclass(frozen=True)
class TransferCurve:
    """A saturating DC transfer curve (:meth:`Study.dc_sweep`).

    Attributes
    ----------
    source : str
        The swept source.
    output : list of str
        Output node, or (plus, minus).
    opamps : list of str
        Every op-amp, in circuit order.
    input, value : numpy arrays
        The source's value and the output at each step.
    rising : numpy bool array
        True where the step went up (its value at least the previous one's).
    states : dict of str to numpy array of str
        Each op-amp's state at each step: "linear", "high" or "low".
    """

    source: str
    output: List[str]
    opamps: List[str]
    input: np.ndarray
    value: np.ndarray
    rising: np.ndarray
    states: Dict[str, np.ndarray]

    @classmethod
    def _from_core(cls, c: Mapping[str, Any]) -> "TransferCurve":
        names = np.asarray(c["state_names"], dtype=object)
        codes = c["states"]
        states = {amp: names[codes[:, j]].astype(str) for j, amp in enumerate(c["opamps"])}
        return cls(c["source"], list(c["output"]), list(c["opamps"]), c["input"], c["value"],
                   c["rising"], states)

    def crossings(self, level: float = 0.0) -> Tuple[List[float], List[float]]:
        """Where the output crosses ``level``, going up and going down the sweep: the
        source values (linear interpolation between steps), as (on rising steps,
        on falling steps)."""
        up: List[float] = []
        down: List[float] = []
        for i in range(1, len(self.input)):
            a, b = self.value[i - 1] - level, self.value[i] - level
            if a == 0 or (a < 0) == (b < 0):
                continue
            x = self.input[i - 1] + (self.input[i] - self.input[i - 1]) * a / (a - b)
            (up if self.rising[i] else down).append(float(x))
        return up, down

    def to_frame(self) -> "Any":
        """The curve as a pandas DataFrame: input, output, direction and each op-amp's state."""
        pd = pandas()
        frame = pd.DataFrame({"input": self.input, "output": self.value,
                              "direction": np.where(self.rising, "up", "down")})
        for amp, states in self.states.items():
            frame[amp] = states
        return frame
