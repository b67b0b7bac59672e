"""Capability indices, the normal-fit yield, and the bounded-memory histogram."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Optional, Tuple

import numpy as np

from . import _core
from ._frames import pandas

__all__ = ["Capability", "Histogram", "capability", "normal_fit_yield"]

_NAN_PAIR = (math.nan, math.nan)


def same(a: Any, b: Any) -> bool:
    """Equality of results in which NaN (an undefined figure) equals NaN."""
    if isinstance(a, float) and isinstance(b, float):
        return a == b or (math.isnan(a) and math.isnan(b))
    if isinstance(a, (tuple, list)) and isinstance(b, (tuple, list)):
        return type(a) is type(b) and len(a) == len(b) and all(same(x, y) for x, y in zip(a, b))
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(same(a[k], b[k]) for k in a)
    return bool(a == b)


class NanEqual:
    """Mixin for result dataclasses: fields compare equal when both are NaN."""

    def __eq__(self, other: object) -> bool:
        if type(other) is not type(self):
            return NotImplemented
        return all(same(getattr(self, f), getattr(other, f))
                   for f in self.__dataclass_fields__)  # type: ignore[attr-defined]

    __hash__ = None  # type: ignore[assignment]


@dataclass(frozen=True, eq=False)
class Capability(NanEqual):
    """Capability indices of a measurement against its spec limits.

    Cp = (USL - LSL) / (6 s), Cpu = (USL - mean) / (3 s), Cpl = (mean - LSL) / (3 s),
    Cpk = min(Cpu, Cpl) (NIST/SEMATECH e-Handbook of Statistical Methods, 6.1.6). The
    Monte Carlo builds are one population, so s is the overall standard deviation and
    these equal Pp and Ppk. NaN where an index is undefined (no limit on that side).

    Attributes
    ----------
    cp, cpk, cpu, cpl : float
    cp_interval : (float, float)
        From the chi-square law of s^2 (Montgomery, ch. 8).
    cpk_interval : (float, float)
        Bissell's normal approximation (Applied Statistics 39(3), 1990).
    """

    cp: float = math.nan
    cpk: float = math.nan
    cpu: float = math.nan
    cpl: float = math.nan
    cp_interval: Tuple[float, float] = _NAN_PAIR
    cpk_interval: Tuple[float, float] = _NAN_PAIR


def capability(lsl: Optional[float], usl: Optional[float], mean: float, std_dev: float, n: int,
               confidence: float = 0.95) -> Capability:
    """Capability of a sample of ``n`` values with the given mean and standard deviation
    against the limits ``lsl`` and ``usl`` (None or infinite: no limit on that side)."""
    low = -math.inf if lsl is None else float(lsl)
    high = math.inf if usl is None else float(usl)
    if isinstance(n, bool) or not hasattr(n, "__index__") or n.__index__() < 0:
        raise TypeError(f"n must be a whole number >= 0, got {n!r}")
    return Capability(**_core.capability(low, high, float(mean), float(std_dev), n.__index__(),
                                         float(confidence)))


def normal_fit_yield(lsl: Optional[float], usl: Optional[float], mean: float,
                     std_dev: float) -> float:
    """Fraction of N(mean, std_dev^2) within [lsl, usl]: the yield a normal fit predicts
    (None or infinite: no limit on that side). NaN if ``std_dev`` is not positive."""
    low = -math.inf if lsl is None else float(lsl)
    high = math.inf if usl is None else float(usl)
    return _core.normal_fit_yield(low, high, float(mean), float(std_dev))


class Histogram:
    """A fixed-bin histogram in bounded memory, with quantiles and coverage intervals.

    ``bins`` equal bins over [low, high); values below or above are counted apart, NaN
    is not counted. Merging is exact, so chunked runs give the same counts on any thread
    count. Each measurement of a run carries one (:attr:`MeasurementStats.histogram`).

    Parameters
    ----------
    low, high : float
        The range (finite, low < high).
    bins : int
        Number of bins (>= 1).
    """

    def __init__(self, low: float, high: float, bins: int) -> None:
        self._core = _core.Histogram(float(low), float(high), bins)

    @classmethod
    def _wrap(cls, core: "_core.Histogram") -> "Histogram":
        h = cls.__new__(cls)
        h._core = core
        return h

    def add(self, values: Any) -> None:
        """Count one value or an array of values."""
        if np.ndim(values) == 0:
            self._core.add(float(values))
        else:
            self._core.add_many(np.asarray(values, dtype=np.float64).ravel())

    def merge(self, other: "Histogram") -> None:
        """Add another histogram of the same range and bins (Error otherwise)."""
        self._core.merge(other._core)

    @property
    def low(self) -> float:
        """Lower end of the range."""
        return self._core.low

    @property
    def high(self) -> float:
        """Upper end of the range (excluded)."""
        return self._core.high

    @property
    def bins(self) -> int:
        """Number of bins (0 for a histogram with no range)."""
        return self._core.bins

    @property
    def counts(self) -> np.ndarray:
        """Counts per bin (a read-only uint64 view)."""
        return self._core.counts

    @property
    def edges(self) -> np.ndarray:
        """The bins + 1 bin edges."""
        return np.linspace(self.low, self.high, self.bins + 1)

    @property
    def below(self) -> int:
        """Values below :attr:`low`."""
        return self._core.below

    @property
    def above(self) -> int:
        """Values at or above :attr:`high` (+inf included)."""
        return self._core.above

    @property
    def total(self) -> int:
        """Every value counted (all but NaN)."""
        return self._core.total

    def quantile(self, p: float) -> float:
        """The p-quantile, linear within a bin; NaN outside the range or when empty."""
        return self._core.quantile(float(p))

    def coverage_interval(self, coverage: float) -> Tuple[float, float]:
        """Probabilistically symmetric coverage interval (JCGM 101:2008, 7.7)."""
        return self._core.coverage_interval(float(coverage))

    def coarsened(self, max_bins: int) -> "Histogram":
        """The occupied bins merged into at most ``max_bins`` equal bins (no count split)."""
        return Histogram._wrap(self._core.coarsened(max_bins))

    def to_frame(self) -> "Any":
        """The bins as a pandas DataFrame: ``low``, ``high``, ``count``."""
        pd = pandas()
        edges = self.edges
        return pd.DataFrame({"low": edges[:-1], "high": edges[1:], "count": self.counts})

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Histogram):
            return NotImplemented
        return ((self.low, self.high, self.bins, self.below, self.above, self.total)
                == (other.low, other.high, other.bins, other.below, other.above, other.total)
                and np.array_equal(self.counts, other.counts))

    __hash__ = None  # type: ignore[assignment]  # mutable

    def __repr__(self) -> str:
        return (f"<lotwise.Histogram {self.bins} bins over [{self.low:g}, {self.high:g}), "
                f"{self.total} values ({self.below} below, {self.above} above)>")
