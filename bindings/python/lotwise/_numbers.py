"""Engineering notation and binomial intervals, as the C++ core computes them."""

from __future__ import annotations

from typing import Tuple

from . import _core

__all__ = ["clopper_pearson", "format_si", "parse_quantity", "parse_value", "wilson"]


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


def _count(value: int, name: str) -> int:
    # pybind11 would reject a negative count with a generic TypeError; say what is wrong.
    if isinstance(value, bool) or not hasattr(value, "__index__"):
        raise TypeError(f"{name} must be a whole number, got {value!r}")
    value = value.__index__()
    if value < 0:
        raise _core.Error(f"{name} must be >= 0 (got {value})")
    return value
