"""Plots of lotwise results (matplotlib, imported only when a plot is drawn).

Every function takes an optional ``ax`` to draw into (a new figure otherwise) and returns
``(fig, ax)`` for further styling. Inputs are a :class:`lotwise.Result` (from
``Study.run(..., keep_samples=True)`` where per-build values are needed) or a
:class:`lotwise.report.Report` from :func:`lotwise.report.read_report`.

* :func:`histogram` - a measurement's distribution with its spec limits and the normal fit.
* :func:`yield_sweep` - yield against a swept setting, with its confidence band.
* :func:`pareto` - each parameter's share of a measurement's variance, largest first.
* :func:`scatter` - two quantities build by build, failing builds marked.

The artists carry ``gid`` labels (``"spec-min"``, ``"spec-max"``, ``"normal-fit"``,
``"confidence-band"``, ``"failing"``, ...) so that code can find them again.
"""

from __future__ import annotations

import math
import os
from typing import Any, Dict, Iterable, List, Mapping, Optional, Sequence, Tuple, Union

import numpy as np

from . import _core
from .report import Report, Sweep, read_report

__all__ = ["histogram", "pareto", "scatter", "yield_sweep"]

PASS_COLOR = "tab:blue"
FAIL_COLOR = "tab:red"
LIMIT_COLOR = "tab:red"
FIT_COLOR = "black"


def _pyplot() -> Any:
    try:
        import matplotlib.pyplot as plt
    except ImportError as e:  # pragma: no cover - depends on the environment
        raise ImportError("lotwise.plots needs matplotlib: pip install matplotlib") from e
    return plt


def _figure_axes(ax: Any) -> Tuple[Any, Any]:
    if ax is not None:
        return ax.figure, ax
    fig, ax = _pyplot().subplots()
    return fig, ax


def _is_result(obj: Any) -> bool:
    # Duck-typed so that results from other lotwise runners (sweeps, distributed runs) fit.
    return hasattr(obj, "to_json") and hasattr(obj, "yield_fraction")


def _as_report(obj: Any) -> Report:
    return obj if isinstance(obj, Report) else read_report(obj)


# -- histogram --------------------------------------------------------------------------


def histogram(
    source: Any,
    measurement: Optional[str] = None,
    *,
    bins: Union[int, str, Sequence[float]] = "auto",
    limits: Optional[Tuple[Optional[float], Optional[float]]] = None,
    normal_fit: bool = True,
    ax: Any = None,
) -> Tuple[Any, Any]:
    """Histogram of a measurement with its spec limits and the normal law of the same moments.

    Parameters
    ----------
    source : Result, Report, or array_like
        A :class:`lotwise.Result` run with ``keep_samples=True`` (every build's value is
        binned), a :class:`~lotwise.report.Report` (its stored 64-bin histogram is drawn), or
        the values themselves.
    measurement : str
        The measurement's name (not needed for plain values).
    bins : int, str or sequence, optional
        Binning of per-build values (numpy's rules); ignored for a report.
    limits : (min, max), optional
        Spec limits to draw; either may be None. By default the specs on ``measurement``.
    normal_fit : bool, optional
        Draw the normal density with the values' mean and standard deviation, scaled to counts.
    ax : matplotlib Axes, optional

    Returns
    -------
    (Figure, Axes)
    """
    unit = ""
    if isinstance(source, Report) or (
        not _is_result(source) and isinstance(source, (str, os.PathLike, Mapping))
    ):
        report = _as_report(source)
        m = report.measurement(_need_name(measurement, "histogram"))
        h = None if m.distribution is None else m.distribution.histogram
        if h is None or h.counts is None:
            raise _core.Error(f"the report holds no histogram of '{m.name}' (no finite values?)")
        counts, edges = h.counts.astype(float), h.edges
        mean, std = m.mean, m.std_dev
        unit = m.unit
        spec_limits = [(s.min, s.max) for s in report.specs_of(m.name)]
        title = m.name
    elif _is_result(source):
        name = _need_name(measurement, "histogram")
        values = np.asarray(_result_samples(source, name, "histogram"), dtype=float)
        finite = values[np.isfinite(values)]
        counts, edges = np.histogram(finite, bins=bins)
        counts = counts.astype(float)
        mean, std = _moments(finite)
        stats = source.measurements.get(name)
        unit = getattr(stats, "unit", "")
        spec_limits = [(s.min, s.max) for s in source.specs if s.measurement == name]
        title = name
    else:
        values = np.asarray(source, dtype=float).ravel()
        finite = values[np.isfinite(values)]
        if finite.size == 0:
            raise _core.Error("histogram: no finite values to plot")
        counts, edges = np.histogram(finite, bins=bins)
        counts = counts.astype(float)
        mean, std = _moments(finite)
        spec_limits = []
        title = measurement or ""
    if limits is not None:
        spec_limits = [tuple(limits)]

    fig, ax = _figure_axes(ax)
    ax.stairs(counts, edges, fill=True, color=PASS_COLOR, alpha=0.6, gid="histogram",
              label="builds")
    if normal_fit and math.isfinite(mean) and math.isfinite(std) and std > 0:
        width = (edges[-1] - edges[0]) / len(counts)
        span = max(edges[-1] - edges[0], 8 * std)
        centre = 0.5 * (edges[0] + edges[-1])
        x = np.linspace(centre - 0.5 * span, centre + 0.5 * span, 400)
        density = np.exp(-0.5 * ((x - mean) / std) ** 2) / (std * math.sqrt(2 * math.pi))
        ax.plot(x, counts.sum() * width * density, color=FIT_COLOR, linewidth=1.2,
                gid="normal-fit", label=f"normal fit (mean {mean:.4g}, sd {std:.3g})")
    for low, high in spec_limits:
        if low is not None:
            ax.axvline(low, color=LIMIT_COLOR, linestyle="--", gid="spec-min",
                       label=f"spec min {low:g}")
        if high is not None:
            ax.axvline(high, color=LIMIT_COLOR, linestyle="--", gid="spec-max",
                       label=f"spec max {high:g}")
    ax.set_xlabel(f"{title} ({unit})" if unit else title)
    ax.set_ylabel("builds")
    ax.legend(fontsize="small")
    return fig, ax


def _moments(values: np.ndarray) -> Tuple[float, float]:
    if values.size == 0:
        return math.nan, math.nan
    return float(values.mean()), float(values.std(ddof=1)) if values.size > 1 else 0.0


def _need_name(name: Optional[str], what: str) -> str:
    if not name:
        raise TypeError(f"{what}: name the measurement (measurement='...')")
    return name


def _result_samples(result: Any, name: str, what: str) -> np.ndarray:
    """A measurement's per-build values, or a parameter's when the Result offers them."""
    if name in list(result.measurement_names):
        return result.samples_of(name)
    getter = getattr(result, "parameter_values", None)
    if getter is None:
        raise _core.Error(
            f"{what}: '{name}' is not a measurement ({', '.join(result.measurement_names)}), "
            "and this Result does not offer per-build parameter values "
            "(Result.parameter_values is missing in this lotwise version); pass the arrays "
            "instead: scatter(x, y, passes)"
        )
    return getter(name)


# -- yield against a swept setting ------------------------------------------------------


def yield_sweep(
    source: Any,
    *,
    method: str = "clopper_pearson",
    target: Optional[float] = None,
    percent: bool = True,
    xlabel: Optional[str] = None,
    ax: Any = None,
) -> Tuple[Any, Any]:
    """Yield against a swept setting, with its confidence band.

    Parameters
    ----------
    source : SweepResult, Report, Sweep, mapping or sequence of pairs
        The result of ``Study.sweep``; a report with a ``sweep`` section (``lotwise sweep
        --report``) or its :class:`~lotwise.report.Sweep`; or the points as
        ``{setting: Result}`` or ``[(setting, Result), ...]``, where the band is each
        Result's interval (``method``). A two-axis sweep (settings as pairs) draws one
        line per value of the second axis.
    method : str, optional
        Which interval to shade ("clopper_pearson", "wilson", "jeffreys").
    target : float, optional
        A target yield (a fraction) drawn as a horizontal line.
    percent : bool, optional
        Show yield in percent (default) rather than as a fraction.
    ax : matplotlib Axes, optional

    Returns
    -------
    (Figure, Axes)
    """
    curves, default_label, confidence = _sweep_curves(source, method)
    scale = 100.0 if percent else 1.0
    fig, ax = _figure_axes(ax)
    for label, x, y, low, high in curves:
        order = np.argsort(x)
        x, y, low, high = x[order], y[order], low[order], high[order]
        line, = ax.plot(x, scale * y, marker="o", gid="yield", label=label or "yield")
        band_label = f"{100 * confidence:g} % interval" if confidence else "interval"
        ax.fill_between(x, scale * low, scale * high, color=line.get_color(), alpha=0.25,
                        gid="confidence-band", label=band_label if label is None else None)
    if target is not None:
        ax.axhline(scale * target, color=LIMIT_COLOR, linestyle="--", gid="target",
                   label=f"target {scale * target:g}{' %' if percent else ''}")
    ax.set_xlabel(xlabel or default_label)
    ax.set_ylabel("yield (%)" if percent else "yield")
    ax.legend(fontsize="small")
    return fig, ax


Curve = Tuple[Optional[str], np.ndarray, np.ndarray, np.ndarray, np.ndarray]


def _sweep_curves(source: Any, method: str) -> Tuple[List[Curve], str, Optional[float]]:
    if isinstance(source, (Report, Sweep)) or (
        isinstance(source, (str, os.PathLike, Mapping)) and not _pairs_mapping(source)
    ):
        confidence = None
        if not isinstance(source, Sweep):
            report = _as_report(source)
            confidence = report.run.confidence
            sweep = report._need(report.sweep, "sweep")
        else:
            sweep = source
        return _report_curves(sweep, method), sweep.axes[0].label if sweep.axes else "", confidence
    pairs = list(source.items()) if isinstance(source, Mapping) else list(source)
    if not pairs:
        raise _core.Error("yield_sweep: no points to plot")
    # A sweep result of the Python API (Study.sweep) names its axes.
    axes = list(getattr(source, "axes", []) or [])
    labels = [getattr(a, "label", None) or f"{a.parameter} {a.setting}" for a in axes]
    groups: Dict[Tuple[float, ...], List[Tuple[float, Any]]] = {}
    confidence = None
    for i, pair in enumerate(pairs):
        try:
            setting, result = pair
        except (TypeError, ValueError):
            raise TypeError(f"yield_sweep: point {i} is not a (setting, Result) pair") from None
        if not _is_result(result):
            raise TypeError(f"yield_sweep: point {i}'s result is a {type(result).__name__}, "
                            "not a lotwise Result")
        settings = tuple(float(v) for v in np.atleast_1d(np.asarray(setting, dtype=float)))
        if len(settings) not in (1, 2):
            raise _core.Error(f"yield_sweep: draws one or two axes, point {i} has {len(settings)}")
        groups.setdefault(settings[1:], []).append((settings[0], result))
        confidence = result.confidence
    def interval(result: Any) -> Tuple[float, float]:
        if method == "clopper_pearson":
            return result.interval
        found = getattr(result, f"{method}_interval", None)
        if found is None:
            raise _core.Error(f"yield_sweep: the results offer no '{method}' interval")
        return found

    curves: List[Curve] = []
    for key, points in groups.items():
        label = None
        if key:
            name = labels[1] if len(labels) > 1 else "second setting"
            label = f"{name} = {key[0]:g}"
        curves.append((
            label,
            np.array([x for x, _ in points], dtype=float),
            np.array([r.yield_fraction for _, r in points], dtype=float),
            np.array([interval(r)[0] for _, r in points], dtype=float),
            np.array([interval(r)[1] for _, r in points], dtype=float),
        ))
    return curves, labels[0] if labels else "setting", confidence


def _pairs_mapping(source: Any) -> bool:
    return isinstance(source, Mapping) and "schema" not in source


def _report_curves(sweep: Sweep, method: str) -> List[Curve]:
    if not sweep.points:
        raise _core.Error("yield_sweep: the sweep has no points")
    if len(sweep.axes) not in (1, 2):
        raise _core.Error(f"yield_sweep: draws one or two axes, the sweep has {len(sweep.axes)}")
    groups: Dict[Optional[float], List[Any]] = {}
    for p in sweep.points:
        key = p.settings[1] if len(sweep.axes) == 2 else None
        groups.setdefault(key, []).append(p)
    curves: List[Curve] = []
    for key, points in groups.items():
        intervals = []
        for p in points:
            if method not in p.intervals:
                raise _core.Error(
                    f"yield_sweep: the sweep's points hold no '{method}' interval "
                    f"(they hold: {', '.join(p.intervals) or 'none'})"
                )
            intervals.append(p.intervals[method])
        label = None if key is None else f"{sweep.axes[1].label} = {key:g}"
        curves.append((
            label,
            np.array([p.settings[0] for p in points]),
            np.array([p.yield_ for p in points]),
            np.array([i.low for i in intervals]),
            np.array([i.high for i in intervals]),
        ))
    return curves


# -- contribution Pareto chart ----------------------------------------------------------


def pareto(
    source: Any,
    measurement: Optional[str] = None,
    *,
    basis: str = "auto",
    top: Optional[int] = None,
    ax: Any = None,
) -> Tuple[Any, Any]:
    """Each parameter's share of a measurement's variance, largest first, with the running sum.

    Parameters
    ----------
    source : Report, Result, WorstCaseResult or mapping
        A report (or a Result, whose report is read), the result of ``Study.worst_case``,
        or ``{parameter: share}`` directly.
    measurement : str
        The measurement whose variance is split (not needed for a mapping).
    basis : {"auto", "rss", "correlation"}
        ``"rss"``: the worst-case section's shares of the root-sum-square variance (first-order
        sensitivities at nominal). ``"correlation"``: squared sample correlations from the
        Monte Carlo builds (the attribution section), each parameter's share of the variance
        when the parameters are independent; they need not sum to 1. ``"auto"`` takes
        ``"rss"`` when the report has a worst case, else ``"correlation"``. The y-axis label
        says which was drawn.
    top : int, optional
        Draw only the largest ``top`` shares.
    ax : matplotlib Axes, optional

    Returns
    -------
    (Figure, Axes)
        The bars are on ``ax``; the running sum is on a twin axis.
    """
    if isinstance(source, Mapping) and "schema" not in source:
        shares = {str(k): float(v) for k, v in source.items()}
        basis_label = "share of variance"
    elif _is_worst_case(source):
        name = _need_name(measurement, "pareto")
        if basis not in ("auto", "rss"):
            raise ValueError(f"pareto: a worst-case result gives basis 'rss', not {basis!r}")
        if name not in source.measurements:
            raise _core.Error(f"pareto: the worst case has no measurement '{name}' "
                              f"(measurements: {', '.join(source.measurements)})")
        shares = dict(source.measurements[name].variance_shares)
        basis_label = "share of RSS variance (worst-case sensitivities)"
    else:
        report = _as_report(source)
        name = _need_name(measurement, "pareto")
        if basis == "auto":
            basis = "rss" if report.worst_case is not None else "correlation"
        if basis == "rss":
            shares = report._need(report.worst_case, "worst_case").variance_shares(name)
            basis_label = "share of RSS variance (worst-case sensitivities)"
        elif basis == "correlation":
            shares = report._need(report.attribution, "attribution").variance_shares(name)
            basis_label = "squared sample correlation (Monte Carlo)"
        else:
            raise ValueError(f"pareto: basis must be 'auto', 'rss' or 'correlation', not {basis!r}")
    items = sorted(((k, v) for k, v in shares.items() if math.isfinite(v)),
                   key=lambda kv: kv[1], reverse=True)
    if top is not None:
        items = items[:top]
    names = [k for k, _ in items]
    heights = np.array([v for _, v in items], dtype=float)

    fig, ax = _figure_axes(ax)
    positions = np.arange(len(names))
    ax.bar(positions, heights, color=PASS_COLOR, gid="shares")
    ax.set_xticks(positions)
    ax.set_xticklabels(names, rotation=45, ha="right")
    ax.set_ylabel(basis_label)
    if measurement:
        ax.set_title(f"what spreads {measurement}")
    twin = ax.twinx()
    twin.plot(positions, np.cumsum(heights), color=FIT_COLOR, marker=".", gid="cumulative")
    twin.set_ylabel("running sum")
    twin.set_ylim(0, max(1.0, float(np.sum(heights))) * 1.05)
    return fig, ax


def _is_worst_case(obj: Any) -> bool:
    # Study.worst_case's result: measurements by name, each with variance_shares by parameter.
    measurements = getattr(obj, "measurements", None)
    return (not isinstance(obj, Report) and isinstance(measurements, Mapping)
            and all(hasattr(m, "variance_shares") for m in measurements.values()))


# -- scatter of two quantities, failing builds marked -----------------------------------


def scatter(
    first: Any,
    second: Any,
    third: Any = None,
    *,
    xlabel: Optional[str] = None,
    ylabel: Optional[str] = None,
    ax: Any = None,
) -> Tuple[Any, Any]:
    """Two quantities build by build, with the builds that fail a spec marked.

    Two forms:

    * ``scatter(x, y, passes)``: arrays of equal length and a boolean pass mask.
    * ``scatter(result, "name_x", "name_y")``: a :class:`lotwise.Result` run with
      ``keep_samples=True`` and two measurement names, or parameter names where the Result
      offers per-build parameter values (``Result.parameter_values``).

    Returns
    -------
    (Figure, Axes)
    """
    if _is_result(first):
        if not isinstance(second, str) or not isinstance(third, str):
            raise TypeError("scatter(result, x_name, y_name): give two names")
        x = np.asarray(_result_samples(first, second, "scatter"), dtype=float)
        y = np.asarray(_result_samples(first, third, "scatter"), dtype=float)
        passes = np.asarray(first.passes, dtype=bool)
        xlabel = xlabel or second
        ylabel = ylabel or third
    else:
        if third is None:
            raise TypeError("scatter(x, y, passes): the pass mask is missing")
        x = np.asarray(first, dtype=float).ravel()
        y = np.asarray(second, dtype=float).ravel()
        passes = np.asarray(third)
        if passes.dtype != np.bool_:
            raise TypeError(f"scatter: passes must be a boolean mask, got dtype {passes.dtype}")
        passes = passes.ravel()
    if not (len(x) == len(y) == len(passes)):
        raise ValueError(
            f"scatter: x, y and passes differ in length ({len(x)}, {len(y)}, {len(passes)})"
        )
    fig, ax = _figure_axes(ax)
    failing = ~passes
    ax.scatter(x[passes], y[passes], s=6, color=PASS_COLOR, alpha=0.5, gid="passing",
               label=f"pass ({int(passes.sum())})")
    ax.scatter(x[failing], y[failing], s=14, color=FAIL_COLOR, marker="x", gid="failing",
               label=f"fail ({int(failing.sum())})")
    if xlabel:
        ax.set_xlabel(xlabel)
    if ylabel:
        ax.set_ylabel(ylabel)
    ax.legend(fontsize="small")
    return fig, ax
