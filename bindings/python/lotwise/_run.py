"""Long runs from Python: progress bars, stopping from another thread, Ctrl-C."""

from __future__ import annotations

import warnings
from typing import Any, Callable, Optional, Tuple, Union

from . import _core

__all__ = ["IncompleteRunWarning", "SaturationWarning", "StopToken"]

ProgressCallback = Callable[[int, int], object]
#: ``True`` for a tqdm bar, a callable ``progress(done, total)``, or None / False.
Progress = Union[bool, ProgressCallback, None]


class IncompleteRunWarning(UserWarning):
    """A run was stopped (Ctrl-C, a kernel interrupt or a :class:`StopToken`) and
    returned the builds evaluated so far; its result has ``complete`` False."""


class SaturationWarning(UserWarning):
    """An evaluation withheld measurements because an op-amp passed its output limits."""


class StopToken:
    """A flag another thread sets to stop a run.

    Pass it as ``stop=`` to :meth:`Study.run` or :meth:`Study.sweep`; :meth:`set` from
    any thread stops the run within a fraction of a second, and the run returns the
    builds evaluated so far as a result marked incomplete (``complete`` False). A token
    stays set until :meth:`clear`; while set, runs given it stop at once.

    Examples
    --------
    >>> import threading
    >>> token = StopToken()
    >>> threading.Timer(2.0, token.set).start()  # doctest: +SKIP
    >>> result = study.run(samples=10**9, stop=token)  # doctest: +SKIP
    >>> result.complete  # doctest: +SKIP
    False
    """

    def __init__(self) -> None:
        self._core = _core.StopToken()

    def set(self) -> None:
        """Ask every run holding this token to stop at its next chunk."""
        self._core.set()

    def clear(self) -> None:
        """Reset the token so it can be used for another run."""
        self._core.clear()

    def is_set(self) -> bool:
        """Whether :meth:`set` was called (and not cleared since)."""
        return self._core.is_set()

    def __repr__(self) -> str:
        return f"<lotwise.StopToken {'set' if self.is_set() else 'clear'}>"


class _Bar:
    """A tqdm bar fed with (done, total); made on the first report, closed by close()."""

    def __init__(self, tqdm: Any, description: str) -> None:
        self._tqdm = tqdm
        self._description = description
        self._bar: Any = None

    def __call__(self, done: int, total: int) -> None:
        if self._bar is None:
            self._bar = self._tqdm(total=total, desc=self._description, unit="build",
                                   unit_scale=True, leave=True)
        if self._bar.total != total:
            self._bar.total = total
        self._bar.update(done - self._bar.n)

    def finish(self, done: int) -> None:
        """An adaptive run that met its target early ends its bar at full."""
        if self._bar is not None and self._bar.n == done and self._bar.total != done:
            self._bar.total = done
            self._bar.refresh()

    def close(self) -> None:
        if self._bar is not None:
            self._bar.close()


def _tqdm() -> Any:
    """tqdm.auto's bar (a widget in notebooks, text in terminals), or None without tqdm."""
    try:
        from tqdm.auto import tqdm
    except ImportError:
        return None
    return tqdm


def progress_callback(
    progress: Progress, description: str
) -> Tuple[Optional[ProgressCallback], Callable[[], None]]:
    """The callable to hand to the core, and what to call when the run ends."""
    if progress is None or progress is False:
        return None, lambda: None
    if progress is True:
        tqdm = _tqdm()
        if tqdm is None:  # no tqdm installed: run without a bar
            return None, lambda: None
        bar = _Bar(tqdm, description)
        return bar, bar.close
    if not callable(progress):
        raise TypeError(
            f"progress must be True, False, None or a callable(done, total), got {progress!r}")
    return progress, lambda: None


def stop_core(stop: Optional[StopToken]) -> Optional["_core.StopToken"]:
    if stop is None:
        return None
    if not isinstance(stop, StopToken):
        raise TypeError(f"stop must be a lotwise.StopToken, got {type(stop).__name__}")
    return stop._core


def warn_incomplete(what: str, report: "_core.RunReport", complete: bool, done: int,
                    requested: int, stacklevel: int = 3) -> None:
    if complete or not (report.interrupted or report.stopped):
        return
    why = "interrupted" if report.interrupted else "stopped by its StopToken"
    warnings.warn(
        IncompleteRunWarning(
            f"{what} {why}: the result holds the {done} builds evaluated of {requested} "
            "asked for and is marked incomplete (complete=False)"
        ),
        stacklevel=stacklevel,
    )
