"""Read a lotwise JSON report back into Python.

:func:`read_report` takes the report as a file path, as JSON text, as a parsed ``dict`` or as
anything with a ``to_json()`` method (a :class:`lotwise.Result`) and gives a :class:`Report`: a
small tree of frozen dataclasses that mirrors the layout of docs/report-format.md, plus methods
that lay its tables out as pandas DataFrames (pandas is imported only when a table is asked for).

Non-finite numbers, written in the file as ``"inf"``, ``"-inf"`` and ``"nan"``, come back as
floats; a spec limit that is not set comes back as ``None``. Sections a report does not hold
(temperatures, attribution, worst case, sweep, ...) are ``None``.

>>> report = lotwise.read_report("load_cell.json")  # doctest: +SKIP
>>> report.yield_.fraction, report.yield_.interval.low  # doctest: +SKIP
>>> report.spec_table()  # doctest: +SKIP
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Dict, List, Mapping, Optional, Sequence, Tuple, Union

import numpy as np

from ._core import Error
from ._frames import pandas

__all__ = [
    "Attribution",
    "Capability",
    "DesignInfo",
    "Distribution",
    "Histogram",
    "Interval",
    "MeasurementReport",
    "Report",
    "ReportError",
    "RunInfo",
    "SpecReport",
    "Sweep",
    "SweepAxis",
    "SweepPoint",
    "TemperatureReport",
    "TemperatureSetting",
    "Unevaluated",
    "WorstCase",
    "WorstCaseMeasurement",
    "WorstCaseParameter",
    "YieldReport",
    "read_report",
    "SCHEMA",
    "SCHEMA_MAJOR",
]

SCHEMA = "lotwise.report"
#: The major schema version this reader understands; a report of another major version is
#: refused (fields may have changed meaning), newer fields of this version are ignored.
SCHEMA_MAJOR = 1


class ReportError(Error, ValueError):
    """A report that cannot be read: not JSON, another schema, a missing or malformed field.

    The message names the field at fault as a path into the document, such as
    ``specs[1].interval.low``.
    """


# -- the object tree -------------------------------------------------------------------


@dataclass(frozen=True)
class Interval:
    """A two-sided interval; ``method`` names how it was computed where the report says."""

    low: float
    high: float
    method: Optional[str] = None

    @property
    def half_width(self) -> float:
        return 0.5 * (self.high - self.low)


@dataclass(frozen=True)
class Capability:
    """Process capability of a spec's measurement against its limits (NaN where undefined)."""

    cp: float
    cpk: float
    cpu: float
    cpl: float
    cp_interval: Interval
    cpk_interval: Interval


@dataclass(frozen=True)
class Unevaluated:
    """Builds that could not be evaluated; each counts as failing."""

    singular: int
    invalid_values: int
    saturated: int


@dataclass(frozen=True)
class TemperatureSetting:
    """The design's reference temperature and its operating list or drawn range (°C)."""

    reference: float
    operating: Optional[Tuple[float, ...]] = None
    range: Optional[Tuple[float, float]] = None


@dataclass(frozen=True)
class DesignInfo:
    title: str
    parts: int
    varied_parameters: Tuple[str, ...]
    random_coordinates: Optional[Tuple[str, ...]] = None
    temperature: Optional[TemperatureSetting] = None


@dataclass(frozen=True)
class RunInfo:
    samples_requested: int
    samples_evaluated: int
    seed: int
    chunk_size: int
    complete: bool
    confidence: float
    sampler: Optional[str] = None
    replicates: Optional[int] = None
    target_met: Optional[bool] = None


@dataclass(frozen=True)
class YieldReport:
    """Builds meeting every spec: count, fraction and intervals at ``RunInfo.confidence``."""

    passed: int
    fraction: float
    interval: Optional[Interval] = None
    intervals: Dict[str, Interval] = field(default_factory=dict)
    failure_upper_bound: Optional[float] = None
    standard_error: Optional[float] = None
    replicate_interval: Optional[Interval] = None


@dataclass(frozen=True)
class SpecReport:
    measurement: str
    min: Optional[float]
    max: Optional[float]
    passed: int
    fraction: float
    saturated: Optional[int] = None
    interval: Optional[Interval] = None
    intervals: Dict[str, Interval] = field(default_factory=dict)
    capability: Optional[Capability] = None
    normal_fit: Optional[float] = None
    standard_error: Optional[float] = None


@dataclass(frozen=True)
class Histogram:
    """The report's coarse histogram: ``counts`` in equal bins from ``low`` to ``high``.

    ``bins`` is the size of the fine histogram the quantiles come from; ``below`` and
    ``above`` count values outside its range. ``low``/``high``/``counts`` are None when no
    value fell inside.
    """

    bins: int
    below: int
    above: int
    low: Optional[float] = None
    high: Optional[float] = None
    counts: Optional[np.ndarray] = None

    @property
    def edges(self) -> np.ndarray:
        """Bin edges, one more than ``counts``."""
        if self.counts is None or self.low is None or self.high is None:
            return np.empty(0)
        return np.linspace(self.low, self.high, len(self.counts) + 1)


@dataclass(frozen=True)
class Distribution:
    coverage: Interval
    coverage_level: float
    quantiles: Dict[float, float]
    histogram: Optional[Histogram] = None


@dataclass(frozen=True)
class MeasurementReport:
    """Spread of one measurement over the evaluated builds."""

    name: str
    kind: str
    unit: str
    nominal: float
    count: int
    non_finite: int
    mean: float
    std_dev: float
    min: float
    max: float
    saturated: Optional[int] = None
    mean_standard_error: Optional[float] = None
    distribution: Optional[Distribution] = None


@dataclass(frozen=True)
class TemperatureReport:
    """Yield, spec fractions and measurement statistics at one operating temperature."""

    temperature: float
    passed: int
    fraction: float
    interval: Optional[Interval]
    unevaluated: Optional[Unevaluated]
    specs: Tuple[SpecReport, ...]
    measurements: Tuple[MeasurementReport, ...]


@dataclass(frozen=True)
class Attribution:
    """Which varied parameters move each measurement and which sit apart in failing builds.

    ``correlations[m][i]`` is the sample correlation of parameter i with measurement m; for
    independent parameters its square is that parameter's share of the measurement's variance.
    """

    parameters: Tuple[str, ...]
    correlations: Dict[str, np.ndarray]
    failure_shift: np.ndarray
    failure_spread: Optional[np.ndarray] = None

    def variance_shares(self, measurement: str) -> Dict[str, float]:
        """Squared sample correlations of each parameter with ``measurement``."""
        if measurement not in self.correlations:
            raise ReportError(
                f"attribution has no correlations for measurement '{measurement}' "
                f"(measurements: {', '.join(self.correlations) or 'none'})"
            )
        return {p: float(c) ** 2 for p, c in zip(self.parameters, self.correlations[measurement])}


@dataclass(frozen=True)
class WorstCaseParameter:
    name: str
    nominal: float
    low: float
    high: float
    std_dev: float


@dataclass(frozen=True)
class WorstCaseMeasurement:
    name: str
    kind: str
    nominal: float
    sensitivities: np.ndarray
    through_common_mode: bool
    eva: Interval
    linear: Interval
    rss_std_dev: float
    rss_half_width: float
    variance_shares: np.ndarray
    corners: Interval


@dataclass(frozen=True)
class WorstCase:
    parameters: Tuple[WorstCaseParameter, ...]
    exhaustive: bool
    corners: int
    measurements: Tuple[WorstCaseMeasurement, ...]

    def measurement(self, name: str) -> WorstCaseMeasurement:
        for m in self.measurements:
            if m.name == name:
                return m
        raise ReportError(
            f"worst_case has no measurement '{name}' "
            f"(measurements: {', '.join(m.name for m in self.measurements) or 'none'})"
        )

    def variance_shares(self, measurement: str) -> Dict[str, float]:
        """Each parameter's share of the RSS variance of ``measurement``."""
        m = self.measurement(measurement)
        return {p.name: float(s) for p, s in zip(self.parameters, m.variance_shares)}


@dataclass(frozen=True)
class SweepAxis:
    setting: str  # "nominal" or "tolerance"
    parameter: str
    values: Tuple[float, ...]

    @property
    def label(self) -> str:
        # The same wording as lotwise.SweepAxis.label, so the tables' columns match.
        return f"{self.parameter} {self.setting}"


@dataclass(frozen=True)
class SweepPoint:
    settings: Tuple[float, ...]
    samples: int
    passed: int
    yield_: float
    intervals: Dict[str, Interval]
    specs: Tuple[Dict[str, Any], ...]
    measurements: Tuple[Dict[str, Any], ...]


@dataclass(frozen=True)
class Sweep:
    """Yield at every combination of the axes' values, the first axis varying slowest."""

    axes: Tuple[SweepAxis, ...]
    points: Tuple[SweepPoint, ...]

    def table(self, method: str = "clopper_pearson") -> "Any":
        """One row per point: the axis settings, samples, passed, yield and its interval."""
        pd = pandas()
        rows = []
        for p in self.points:
            row: Dict[str, Any] = {a.label: v for a, v in zip(self.axes, p.settings)}
            interval = p.intervals.get(method)
            row.update(
                samples=p.samples,
                passed=p.passed,
                yield_fraction=p.yield_,
                low=np.nan if interval is None else interval.low,
                high=np.nan if interval is None else interval.high,
            )
            for s in p.specs:
                row[f"{s['measurement']} fraction"] = s.get("fraction", np.nan)
            rows.append(row)
        return pd.DataFrame(rows)


@dataclass(frozen=True)
class Report:
    """A lotwise JSON report, read back (see docs/report-format.md for each field).

    ``yield_`` carries a trailing underscore because ``yield`` is a Python keyword.
    ``raw`` keeps the parsed document for fields this reader does not model.
    """

    schema_version: Union[int, str]
    lotwise_version: str
    caution: str
    design: DesignInfo
    run: RunInfo
    yield_: YieldReport
    unevaluated: Unevaluated
    specs: Tuple[SpecReport, ...]
    measurements: Tuple[MeasurementReport, ...]
    temperatures: Optional[Tuple[TemperatureReport, ...]] = None
    attribution: Optional[Attribution] = None
    worst_case: Optional[WorstCase] = None
    sweep: Optional[Sweep] = None
    raw: Mapping[str, Any] = field(default_factory=dict, repr=False, compare=False)

    # -- look-ups ----------------------------------------------------------------------

    def measurement(self, name: str) -> MeasurementReport:
        """The measurement called ``name``."""
        for m in self.measurements:
            if m.name == name:
                return m
        raise ReportError(
            f"the report has no measurement '{name}' "
            f"(measurements: {', '.join(m.name for m in self.measurements) or 'none'})"
        )

    def specs_of(self, measurement: str) -> List[SpecReport]:
        """The specs that limit ``measurement`` (possibly none)."""
        return [s for s in self.specs if s.measurement == measurement]

    # -- tables ------------------------------------------------------------------------

    def spec_table(self) -> "Any":
        """One row per spec: limits, pass count and fraction, intervals, capability, normal fit."""
        pd = pandas()
        rows = []
        for s in self.specs:
            row: Dict[str, Any] = {
                "measurement": s.measurement,
                "min": np.nan if s.min is None else s.min,
                "max": np.nan if s.max is None else s.max,
                "passed": s.passed,
                "fraction": s.fraction,
                "low": np.nan if s.interval is None else s.interval.low,
                "high": np.nan if s.interval is None else s.interval.high,
            }
            for method, i in s.intervals.items():
                row[f"{method}_low"] = i.low
                row[f"{method}_high"] = i.high
            if s.capability is not None:
                c = s.capability
                row.update(cp=c.cp, cpk=c.cpk, cpu=c.cpu, cpl=c.cpl,
                           cpk_low=c.cpk_interval.low, cpk_high=c.cpk_interval.high)
            row["normal_fit"] = np.nan if s.normal_fit is None else s.normal_fit
            row["saturated"] = s.saturated
            rows.append(row)
        return pd.DataFrame(rows)

    def measurement_table(self) -> "Any":
        """One row per measurement, indexed by name: moments, extremes, coverage, quantiles."""
        pd = pandas()
        rows = []
        for m in self.measurements:
            row: Dict[str, Any] = {
                "name": m.name, "kind": m.kind, "unit": m.unit, "nominal": m.nominal,
                "count": m.count, "non_finite": m.non_finite, "saturated": m.saturated,
                "mean": m.mean, "std_dev": m.std_dev, "min": m.min, "max": m.max,
            }
            if m.mean_standard_error is not None:
                row["mean_standard_error"] = m.mean_standard_error
            if m.distribution is not None:
                d = m.distribution
                row["coverage_level"] = d.coverage_level
                row["coverage_low"] = d.coverage.low
                row["coverage_high"] = d.coverage.high
                for p, q in d.quantiles.items():
                    row[f"q{p:g}"] = q
            rows.append(row)
        return pd.DataFrame(rows).set_index("name")

    def histogram_table(self, measurement: str) -> "Any":
        """The coarse histogram of ``measurement``: bin edges and counts, one row per bin."""
        pd = pandas()
        m = self.measurement(measurement)
        h = None if m.distribution is None else m.distribution.histogram
        if h is None or h.counts is None:
            raise ReportError(f"measurements['{measurement}'] has no histogram in this report")
        edges = h.edges
        return pd.DataFrame({"low": edges[:-1], "high": edges[1:], "count": h.counts})

    def attribution_table(self) -> "Any":
        """One row per varied parameter: correlation with each measurement, failure shift/spread."""
        pd = pandas()
        a = self._need(self.attribution, "attribution")
        data: Dict[str, Any] = {f"correlation {m}": c for m, c in a.correlations.items()}
        data["failure_shift"] = a.failure_shift
        if a.failure_spread is not None:
            data["failure_spread"] = a.failure_spread
        return pd.DataFrame(data, index=pd.Index(list(a.parameters), name="parameter"))

    def sensitivity_table(self) -> "Any":
        """Worst case: one row per (measurement, parameter) with sensitivity and RSS share."""
        pd = pandas()
        w = self._need(self.worst_case, "worst_case")
        rows = []
        for m in w.measurements:
            for p, s, share in zip(w.parameters, m.sensitivities, m.variance_shares):
                rows.append({"measurement": m.name, "parameter": p.name, "sensitivity": s,
                             "variance_share": share})
        return pd.DataFrame(rows)

    def worst_case_table(self) -> "Any":
        """Worst case: one row per measurement with EVA, linear, RSS and corner extremes."""
        pd = pandas()
        w = self._need(self.worst_case, "worst_case")
        rows = []
        for m in w.measurements:
            rows.append({
                "name": m.name, "nominal": m.nominal,
                "eva_low": m.eva.low, "eva_high": m.eva.high,
                "linear_low": m.linear.low, "linear_high": m.linear.high,
                "rss_std_dev": m.rss_std_dev, "rss_half_width": m.rss_half_width,
                "corner_low": m.corners.low, "corner_high": m.corners.high,
            })
        return pd.DataFrame(rows).set_index("name")

    def sweep_table(self, method: str = "clopper_pearson") -> "Any":
        """Sweep: one row per point (see :meth:`Sweep.table`)."""
        return self._need(self.sweep, "sweep").table(method)

    def temperature_table(self) -> "Any":
        """One row per operating temperature: yield, interval and each spec's fraction."""
        pd = pandas()
        temps = self._need(self.temperatures, "temperatures")
        rows = []
        for t in temps:
            row: Dict[str, Any] = {
                "temperature": t.temperature, "passed": t.passed, "fraction": t.fraction,
                "low": np.nan if t.interval is None else t.interval.low,
                "high": np.nan if t.interval is None else t.interval.high,
            }
            for s in t.specs:
                row[f"{s.measurement} fraction"] = s.fraction
            rows.append(row)
        return pd.DataFrame(rows)

    def _need(self, section: Any, name: str) -> Any:
        if section is None:
            raise ReportError(f"the report has no '{name}' section")
        return section


# -- reading ---------------------------------------------------------------------------

ReportSource = Union[str, "os.PathLike[str]", bytes, Mapping[str, Any], Any]


def read_report(source: ReportSource) -> Report:
    """Read a lotwise JSON report.

    Parameters
    ----------
    source : path, str, bytes, dict or object with ``to_json()``
        A file path (``str`` or ``os.PathLike``), the JSON text itself (a ``str`` whose first
        non-blank character is ``{``), the parsed document, or a :class:`lotwise.Result`.

    Returns
    -------
    Report

    Raises
    ------
    ReportError
        The text is not JSON, is not a lotwise report, has a schema major version other than
        :data:`SCHEMA_MAJOR`, or misses or mistypes a field (the message names it).
    FileNotFoundError
        The path does not exist.
    """
    where = "report"
    if isinstance(source, Mapping):
        document: Any = source
    else:
        if hasattr(source, "to_json") and callable(source.to_json):
            text = source.to_json()
            where = f"{type(source).__name__}.to_json()"
        elif isinstance(source, bytes):
            text = source.decode("utf-8")
        elif isinstance(source, str) and source.lstrip().startswith("{"):
            text = source
        elif isinstance(source, (str, os.PathLike)):
            path = Path(source)
            text = path.read_text(encoding="utf-8")
            where = str(path)
        else:
            raise TypeError(
                "read_report takes a path, JSON text, a dict or an object with to_json(), "
                f"got {type(source).__name__}"
            )
        try:
            document = json.loads(text)
        except json.JSONDecodeError as e:
            raise ReportError(f"{where}: not valid JSON ({e})") from None
    return _Reader(where).report(document)


class _Reader:
    """Field readers that name the path of whatever is missing or malformed."""

    def __init__(self, where: str) -> None:
        self.where = where

    def fail(self, path: str, what: str) -> ReportError:
        return ReportError(f"{self.where}: {path}: {what}")

    # primitives

    def obj(self, value: Any, path: str) -> Mapping[str, Any]:
        if not isinstance(value, Mapping):
            raise self.fail(path, f"expected an object, got {_kind(value)}")
        return value

    def arr(self, value: Any, path: str) -> Sequence[Any]:
        if not isinstance(value, list):
            raise self.fail(path, f"expected an array, got {_kind(value)}")
        return value

    def get(self, d: Mapping[str, Any], key: str, path: str) -> Any:
        if key not in d:
            raise self.fail(path, f"missing key '{key}'")
        return d[key]

    def number(self, value: Any, path: str) -> float:
        # Non-finite numbers are written as strings (docs/report-format.md).
        if isinstance(value, bool):
            raise self.fail(path, f"expected a number, got {_kind(value)}")
        if isinstance(value, (int, float)):
            return float(value)
        if isinstance(value, str) and value in ("inf", "-inf", "nan"):
            return float(value)
        raise self.fail(path, f"expected a number, got {_kind(value)}")

    def integer(self, value: Any, path: str) -> int:
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.fail(path, f"expected a whole number, got {_kind(value)}")
        return value

    def boolean(self, value: Any, path: str) -> bool:
        if not isinstance(value, bool):
            raise self.fail(path, f"expected true or false, got {_kind(value)}")
        return value

    def text(self, value: Any, path: str) -> str:
        if not isinstance(value, str):
            raise self.fail(path, f"expected a string, got {_kind(value)}")
        return value

    def num(self, d: Mapping[str, Any], key: str, path: str) -> float:
        return self.number(self.get(d, key, path), f"{path}.{key}")

    def int_(self, d: Mapping[str, Any], key: str, path: str) -> int:
        return self.integer(self.get(d, key, path), f"{path}.{key}")

    def str_(self, d: Mapping[str, Any], key: str, path: str) -> str:
        return self.text(self.get(d, key, path), f"{path}.{key}")

    def opt(self, d: Mapping[str, Any], key: str, path: str, read: Any) -> Any:
        """``read(value, path)`` of an optional field, None if absent or null."""
        value = d.get(key)
        return None if value is None else read(value, f"{path}.{key}")

    def section(self, d: Mapping[str, Any], key: str, read: Any) -> Any:
        """An optional top-level section, None if absent."""
        value = d.get(key)
        return None if value is None else read(value, key)

    def limit(self, d: Mapping[str, Any], key: str, path: str) -> Optional[float]:
        value = self.get(d, key, path)
        return None if value is None else self.number(value, f"{path}.{key}")

    def numbers(self, value: Any, path: str) -> np.ndarray:
        items = self.arr(value, path)
        return np.array([self.number(v, f"{path}[{i}]") for i, v in enumerate(items)], dtype=float)

    def names(self, value: Any, path: str) -> Tuple[str, ...]:
        items = self.arr(value, path)
        return tuple(self.text(v, f"{path}[{i}]") for i, v in enumerate(items))

    def interval(self, value: Any, path: str) -> Interval:
        d = self.obj(value, path)
        method = d.get("method")
        return Interval(self.num(d, "low", path), self.num(d, "high", path),
                        None if method is None else self.text(method, f"{path}.method"))

    def interval_set(self, value: Any, path: str) -> Dict[str, Interval]:
        d = self.obj(value, path)
        return {k: self.interval(v, f"{path}.{k}") for k, v in d.items()}

    # sections

    def report(self, document: Any) -> Report:
        d = self.obj(document, "(top level)")
        schema = self.get(d, "schema", "(top level)")
        if schema != SCHEMA:
            raise self.fail("schema",
                            f"expected \"{SCHEMA}\", got {_kind(schema)}: not a lotwise report")
        version = self.get(d, "schema_version", "(top level)")
        major = _major(version)
        if major is None:
            raise self.fail("schema_version", f"expected a version number, got {_kind(version)}")
        if major != SCHEMA_MAJOR:
            raise ReportError(
                f"{self.where}: report schema_version {version} is not supported: this lotwise "
                f"reads schema version {SCHEMA_MAJOR} (major version {major} may change what "
                "fields mean; use the lotwise version that wrote it)"
            )
        specs = self.arr(self.get(d, "specs", "(top level)"), "specs")
        measurements = self.arr(self.get(d, "measurements", "(top level)"), "measurements")
        temperatures = d.get("temperatures")
        return Report(
            schema_version=version,
            lotwise_version=self.str_(d, "lotwise_version", "(top level)"),
            caution=self.str_(d, "caution", "(top level)"),
            design=self.design(self.get(d, "design", "(top level)"), "design"),
            run=self.run(self.get(d, "run", "(top level)"), "run"),
            yield_=self.yield_(self.get(d, "yield", "(top level)"), "yield"),
            unevaluated=self.unevaluated(self.get(d, "unevaluated", "(top level)"), "unevaluated"),
            specs=tuple(self.spec(s, f"specs[{i}]") for i, s in enumerate(specs)),
            measurements=tuple(self.measurement(m, f"measurements[{i}]")
                               for i, m in enumerate(measurements)),
            temperatures=None if temperatures is None else tuple(
                self.temperature(t, f"temperatures[{i}]")
                for i, t in enumerate(self.arr(temperatures, "temperatures"))),
            attribution=self.section(d, "attribution", self.attribution),
            worst_case=self.section(d, "worst_case", self.worst_case),
            sweep=self.section(d, "sweep", self.sweep),
            raw=d,
        )

    def design(self, value: Any, path: str) -> DesignInfo:
        d = self.obj(value, path)
        return DesignInfo(
            title=self.str_(d, "title", path),
            parts=self.int_(d, "parts", path),
            varied_parameters=self.names(self.get(d, "varied_parameters", path),
                                         f"{path}.varied_parameters"),
            random_coordinates=self.opt(d, "random_coordinates", path, self.names),
            temperature=self.opt(d, "temperature", path, self.temperature_setting),
        )

    def temperature_setting(self, value: Any, path: str) -> TemperatureSetting:
        d = self.obj(value, path)
        operating = self.opt(d, "operating", path, self.numbers)
        drawn = self.opt(d, "range", path, self.numbers)
        if drawn is not None and len(drawn) != 2:
            raise self.fail(f"{path}.range", f"expected [low, high], got {len(drawn)} numbers")
        return TemperatureSetting(
            reference=self.num(d, "reference", path),
            operating=None if operating is None else tuple(float(t) for t in operating),
            range=None if drawn is None else (float(drawn[0]), float(drawn[1])),
        )

    def run(self, value: Any, path: str) -> RunInfo:
        d = self.obj(value, path)
        return RunInfo(
            samples_requested=self.int_(d, "samples_requested", path),
            samples_evaluated=self.int_(d, "samples_evaluated", path),
            seed=self.int_(d, "seed", path),
            chunk_size=self.int_(d, "chunk_size", path),
            complete=self.boolean(self.get(d, "complete", path), f"{path}.complete"),
            confidence=self.num(d, "confidence", path),
            sampler=self.opt(d, "sampler", path, self.text),
            replicates=self.opt(d, "replicates", path, self.integer),
            target_met=self.opt(d, "target_met", path, self.boolean),
        )

    def yield_(self, value: Any, path: str) -> YieldReport:
        d = self.obj(value, path)
        return YieldReport(
            passed=self.int_(d, "passed", path),
            fraction=self.num(d, "fraction", path),
            interval=self.opt(d, "interval", path, self.interval),
            intervals=self.opt(d, "intervals", path, self.interval_set) or {},
            failure_upper_bound=self.opt(d, "failure_upper_bound", path, self.number),
            standard_error=self.opt(d, "standard_error", path, self.number),
            replicate_interval=self.opt(d, "replicate_interval", path, self.interval),
        )

    def unevaluated(self, value: Any, path: str) -> Unevaluated:
        d = self.obj(value, path)
        return Unevaluated(self.int_(d, "singular", path), self.int_(d, "invalid_values", path),
                           self.int_(d, "saturated", path))

    def capability(self, value: Any, path: str) -> Capability:
        d = self.obj(value, path)
        return Capability(
            cp=self.num(d, "cp", path), cpk=self.num(d, "cpk", path),
            cpu=self.num(d, "cpu", path), cpl=self.num(d, "cpl", path),
            cp_interval=self.interval(self.get(d, "cp_interval", path), f"{path}.cp_interval"),
            cpk_interval=self.interval(self.get(d, "cpk_interval", path), f"{path}.cpk_interval"),
        )

    def spec(self, value: Any, path: str, with_limits: bool = True) -> SpecReport:
        d = self.obj(value, path)
        return SpecReport(
            measurement=self.str_(d, "measurement", path),
            min=self.limit(d, "min", path) if with_limits else None,
            max=self.limit(d, "max", path) if with_limits else None,
            passed=self.int_(d, "passed", path),
            fraction=self.num(d, "fraction", path),
            saturated=self.opt(d, "saturated", path, self.integer),
            interval=self.opt(d, "interval", path, self.interval),
            intervals=self.opt(d, "intervals", path, self.interval_set) or {},
            capability=self.opt(d, "capability", path, self.capability),
            normal_fit=self.opt(d, "normal_fit", path, self.number),
            standard_error=self.opt(d, "standard_error", path, self.number),
        )

    def measurement(self, value: Any, path: str, full: bool = True) -> MeasurementReport:
        d = self.obj(value, path)
        return MeasurementReport(
            name=self.str_(d, "name", path),
            kind=self.str_(d, "kind", path) if full else "",
            unit=self.str_(d, "unit", path) if full else "",
            nominal=self.num(d, "nominal", path) if full else math.nan,
            count=self.int_(d, "count", path),
            non_finite=self.int_(d, "non_finite", path),
            mean=self.num(d, "mean", path),
            std_dev=self.num(d, "std_dev", path),
            min=self.num(d, "min", path),
            max=self.num(d, "max", path),
            saturated=self.opt(d, "saturated", path, self.integer),
            mean_standard_error=self.opt(d, "mean_standard_error", path, self.number),
            distribution=self.opt(d, "distribution", path, self.distribution),
        )

    def distribution(self, value: Any, path: str) -> Distribution:
        d = self.obj(value, path)
        coverage = self.obj(self.get(d, "coverage", path), f"{path}.coverage")
        quantiles_raw = self.obj(self.get(d, "quantiles", path), f"{path}.quantiles")
        quantiles: Dict[float, float] = {}
        for key, v in quantiles_raw.items():
            try:
                p = float(key)
            except ValueError:
                raise self.fail(f"{path}.quantiles", f"key '{key}' is not a probability") from None
            quantiles[p] = self.number(v, f"{path}.quantiles['{key}']")
        return Distribution(
            coverage=Interval(self.num(coverage, "low", f"{path}.coverage"),
                              self.num(coverage, "high", f"{path}.coverage")),
            coverage_level=self.num(coverage, "level", f"{path}.coverage"),
            quantiles=quantiles,
            histogram=self.opt(d, "histogram", path, self.histogram),
        )

    def histogram(self, value: Any, path: str) -> Histogram:
        d = self.obj(value, path)
        counts = self.opt(d, "counts", path, self.arr)
        if counts is not None:
            counts = np.array(
                [self.integer(c, f"{path}.counts[{i}]") for i, c in enumerate(counts)],
                dtype=np.int64)
            for key in ("low", "high"):
                self.get(d, key, path)
        return Histogram(
            bins=self.int_(d, "bins", path), below=self.int_(d, "below", path),
            above=self.int_(d, "above", path),
            low=self.opt(d, "low", path, self.number), high=self.opt(d, "high", path, self.number),
            counts=counts,
        )

    def temperature(self, value: Any, path: str) -> TemperatureReport:
        d = self.obj(value, path)
        specs = self.arr(self.get(d, "specs", path), f"{path}.specs")
        measurements = self.arr(self.get(d, "measurements", path), f"{path}.measurements")
        return TemperatureReport(
            temperature=self.num(d, "temperature", path),
            passed=self.int_(d, "passed", path),
            fraction=self.num(d, "fraction", path),
            interval=self.opt(d, "interval", path, self.interval),
            unevaluated=self.opt(d, "unevaluated", path, self.unevaluated),
            specs=tuple(self.spec(s, f"{path}.specs[{i}]", with_limits=False)
                        for i, s in enumerate(specs)),
            measurements=tuple(self.measurement(m, f"{path}.measurements[{i}]", full=False)
                               for i, m in enumerate(measurements)),
        )

    def attribution(self, value: Any, path: str) -> Attribution:
        d = self.obj(value, path)
        parameters = self.names(self.get(d, "parameters", path), f"{path}.parameters")
        n = len(parameters)
        correlations_raw = self.obj(self.get(d, "correlations", path), f"{path}.correlations")
        correlations = {}
        for name, row in correlations_raw.items():
            values = self.numbers(row, f"{path}.correlations['{name}']")
            self._length(values, n, f"{path}.correlations['{name}']")
            correlations[name] = values
        shift = self.numbers(self.get(d, "failure_shift", path), f"{path}.failure_shift")
        self._length(shift, n, f"{path}.failure_shift")
        spread = self.opt(d, "failure_spread", path, self.numbers)
        if spread is not None:
            self._length(spread, n, f"{path}.failure_spread")
        return Attribution(parameters, correlations, shift, spread)

    def worst_case(self, value: Any, path: str) -> WorstCase:
        d = self.obj(value, path)
        parameters = []
        for i, p in enumerate(self.arr(self.get(d, "parameters", path), f"{path}.parameters")):
            at = f"{path}.parameters[{i}]"
            p = self.obj(p, at)
            parameters.append(WorstCaseParameter(
                self.str_(p, "name", at), self.num(p, "nominal", at), self.num(p, "low", at),
                self.num(p, "high", at), self.num(p, "std_dev", at)))
        n = len(parameters)
        measurements = []
        for i, m in enumerate(self.arr(self.get(d, "measurements", path), f"{path}.measurements")):
            at = f"{path}.measurements[{i}]"
            m = self.obj(m, at)
            sensitivities = self.numbers(self.get(m, "sensitivities", at), f"{at}.sensitivities")
            shares = self.numbers(self.get(m, "variance_shares", at), f"{at}.variance_shares")
            self._length(sensitivities, n, f"{at}.sensitivities")
            self._length(shares, n, f"{at}.variance_shares")
            rss = self.obj(self.get(m, "rss", at), f"{at}.rss")
            measurements.append(WorstCaseMeasurement(
                name=self.str_(m, "name", at), kind=self.str_(m, "kind", at),
                nominal=self.num(m, "nominal", at), sensitivities=sensitivities,
                through_common_mode=self.boolean(self.get(m, "through_common_mode", at),
                                                 f"{at}.through_common_mode"),
                eva=self.interval(self.get(m, "eva", at), f"{at}.eva"),
                linear=self.interval(self.get(m, "linear", at), f"{at}.linear"),
                rss_std_dev=self.num(rss, "std_dev", f"{at}.rss"),
                rss_half_width=self.num(rss, "half_width", f"{at}.rss"),
                variance_shares=shares,
                corners=self.interval(self.get(m, "corners", at), f"{at}.corners"),
            ))
        return WorstCase(tuple(parameters), self.boolean(self.get(d, "exhaustive", path),
                                                         f"{path}.exhaustive"),
                         self.int_(d, "corners", path), tuple(measurements))

    def sweep(self, value: Any, path: str) -> Sweep:
        d = self.obj(value, path)
        axes = []
        for i, a in enumerate(self.arr(self.get(d, "axes", path), f"{path}.axes")):
            at = f"{path}.axes[{i}]"
            a = self.obj(a, at)
            axes.append(SweepAxis(self.str_(a, "setting", at), self.str_(a, "parameter", at),
                                  tuple(self.numbers(self.get(a, "values", at), f"{at}.values"))))
        points = []
        for i, p in enumerate(self.arr(self.get(d, "points", path), f"{path}.points")):
            at = f"{path}.points[{i}]"
            p = self.obj(p, at)
            settings = self.numbers(self.get(p, "settings", at), f"{at}.settings")
            self._length(settings, len(axes), f"{at}.settings")
            specs = self.arr(p.get("specs", []), f"{at}.specs")
            measurements = self.arr(p.get("measurements", []), f"{at}.measurements")
            points.append(SweepPoint(
                settings=tuple(float(s) for s in settings),
                samples=self.int_(p, "samples", at), passed=self.int_(p, "passed", at),
                yield_=self.num(p, "yield", at),
                intervals=self.interval_set(self.get(p, "intervals", at), f"{at}.intervals"),
                specs=tuple(self._flat(s, f"{at}.specs[{j}]") for j, s in enumerate(specs)),
                measurements=tuple(self._flat(m, f"{at}.measurements[{j}]")
                                   for j, m in enumerate(measurements)),
            ))
        return Sweep(tuple(axes), tuple(points))

    def _flat(self, value: Any, path: str) -> Dict[str, Any]:
        """A small record with numbers decoded ("nan" -> nan) and nested bounds flattened."""
        d = self.obj(value, path)
        out: Dict[str, Any] = {}
        for key, v in d.items():
            if isinstance(v, Mapping):
                for sub, w in v.items():
                    out[f"{key}_{sub}"] = self.number(w, f"{path}.{key}.{sub}")
            elif isinstance(v, str) and v not in ("inf", "-inf", "nan"):
                out[key] = v
            else:
                out[key] = self.number(v, f"{path}.{key}")
        return out

    def _length(self, values: np.ndarray, n: int, path: str) -> None:
        if len(values) != n:
            raise self.fail(path,
                            f"expected {n} entries (one per parameter/axis), got {len(values)}")


def _major(version: Any) -> Optional[int]:
    if isinstance(version, bool):
        return None
    if isinstance(version, int):
        return version
    if isinstance(version, str):
        head = version.split(".", 1)[0]
        if head.isdigit():
            return int(head)
    return None


def _kind(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return f"the string {value!r}" if len(value) <= 40 else "a string"
    if isinstance(value, (int, float)):
        return f"the number {value!r}"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, Mapping):
        return "an object"
    return type(value).__name__
