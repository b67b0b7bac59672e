"""Engineering notation, binomial intervals and preferred values, as the C++ core
computes them."""

from __future__ import annotations

from typing import Tuple

import numpy as np

from . import _core

__all__ = [
    "binomial_interval", "clopper_pearson", "clopper_pearson_upper", "format_si", "is_preferred",
    "jeffreys", "letter_of_tolerance", "nearest_preferred", "parse_quantity", "parse_value",
    "preferred_values", "series_decade", "tolerance_of_letter", "wilson",
]


def parse_value(text: str) -> float:
    """Parse a number as engineers write it.

    Parameters
    ----------
    text : str
        A number with an optional SI prefix (f p n u µ m k M G T), an RKM code
        ("4k7", "2R2") and an optional unit word that is ignored (ohm, F, H, V, A,
        Hz, s): "4.99k", "100n", "2.2uF", "1e-3".

    Returns
    -------
    float
        The value in SI units.

    Raises
    ------
    DesignError
        If the text is not such a number; the message names the text.
    """
    return _core.parse_value(text)


def parse_quantity(text: str) -> Tuple[float, bool]:
    """Parse a number that may also be relative ("1%", "50ppm").

    Returns
    -------
    value : float
        The number; percent and ppm values are returned as fractions (1 % -> 0.01).
    relative : bool
        True for "%" and "ppm" values.

    Raises
    ------
    DesignError
        If the text is not such a number.
    """
    value, relative = _core.parse_quantity(text)
    return value, relative


def format_si(value: float, digits: int = 4) -> str:
    """Format a value with an SI prefix and ``digits`` significant digits ("4.99k")."""
    return _core.format_si(value, digits)


def clopper_pearson(k: int, n: int, confidence: float = 0.95) -> Tuple[float, float]:
    """Exact (Clopper-Pearson) two-sided interval for a binomial proportion.

    This is the interval lotwise reports for yields and per-spec pass fractions.

    Parameters
    ----------
    k : int
        Successes (builds that passed), ``0 <= k <= n``.
    n : int
        Trials (builds evaluated), ``n >= 1``.
    confidence : float, optional
        Confidence level, strictly between 0 and 1.

    Returns
    -------
    (float, float)
        Lower and upper bound; 0 when ``k == 0`` and 1 when ``k == n``.

    Raises
    ------
    Error
        If ``n`` is 0, ``k > n`` or the confidence level is out of range.
    """
    return _core.clopper_pearson(_count(k, "k"), _count(n, "n"), confidence)


def wilson(k: int, n: int, confidence: float = 0.95) -> Tuple[float, float]:
    """Wilson score interval (no continuity correction) for a binomial proportion.

    Parameters and errors as for :func:`clopper_pearson`.
    """
    return _core.wilson(_count(k, "k"), _count(n, "n"), confidence)


def jeffreys(k: int, n: int, confidence: float = 0.95) -> Tuple[float, float]:
    """Jeffreys interval: the equal-tailed interval of the Beta(k + 1/2, n - k + 1/2)
    posterior, with the lower bound 0 at k = 0 and the upper bound 1 at k = n (Brown,
    Cai & DasGupta, Statist. Sci. 16(2), 2001).

    Parameters and errors as for :func:`clopper_pearson`.
    """
    return _core.jeffreys(_count(k, "k"), _count(n, "n"), confidence)


def clopper_pearson_upper(k: int, n: int, confidence: float = 0.95) -> float:
    """One-sided exact upper confidence bound for a proportion k / n.

    With ``k = 0`` it is 1 - (1 - confidence)^(1/n), about 3/n at 95 % (the rule of
    three): the bound on a failure fraction after n passing builds.
    """
    return _core.clopper_pearson_upper(_count(k, "k"), _count(n, "n"), confidence)


def binomial_interval(method: str, k: int, n: int, confidence: float = 0.95) -> Tuple[float, float]:
    """The interval of ``method``: "clopper_pearson", "wilson" or "jeffreys"."""
    return _core.binomial_interval(method, _count(k, "k"), _count(n, "n"), confidence)


def series_decade(series: str) -> np.ndarray:
    """One decade of an IEC 60063 series ("E3" ... "E192") as mantissas in [1, 10)."""
    return _core.series_decade(series)


def preferred_values(series: str, low: float, high: float) -> np.ndarray:
    """Every value of the series in [low, high] (both > 0), ascending.

    >>> preferred_values("E12", 1e3, 2e3).tolist()
    [1000.0, 1200.0, 1500.0, 1800.0]
    """
    return _core.preferred_values(series, float(low), float(high))


def nearest_preferred(value: float, series: str) -> float:
    """The series value nearest to ``value`` (> 0) in ratio (on a log scale).

    >>> nearest_preferred(4830.0, "E96")
    4870.0
    """
    return _core.nearest_preferred(float(value), series)


def is_preferred(value: float, series: str, tolerance: float = 1e-9) -> bool:
    """True if ``value`` is a value of the series within a relative ``tolerance``."""
    return _core.is_preferred(float(value), series, float(tolerance))


def tolerance_of_letter(code: str) -> float:
    """The relative tolerance of an IEC 60062 letter code ("F" -> 0.01)."""
    return _core.tolerance_of_letter(code)


def letter_of_tolerance(fraction: float) -> str:
    """The IEC 60062 letter of a relative tolerance (0.01 -> "F"), or "" if none."""
    return _core.letter_of_tolerance(float(fraction))


def _count(value: int, name: str) -> int:
    # pybind11 would reject a negative count with a generic TypeError; say what is wrong.
    if isinstance(value, bool) or not hasattr(value, "__index__"):
        raise TypeError(f"{name} must be a whole number, got {value!r}")
    value = value.__index__()
    if value < 0:
        raise _core.Error(f"{name} must be >= 0 (got {value})")
    return value
