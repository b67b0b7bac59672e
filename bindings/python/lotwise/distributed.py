"""Runs that outgrow one machine: a study's chunks evaluated on a Dask cluster.

The run is cut into the same chunks as :meth:`Study.run`; workers evaluate ranges of
chunks and send back their tallies, which are merged here strictly in chunk order. The
answer is therefore the same, bit for bit, as the local run with the same seed and
options, however many workers there are and in whatever order they finish. A worker
lost mid-run costs only the chunks it held: Dask computes them again elsewhere.

>>> from dask.distributed import Client, LocalCluster          # doctest: +SKIP
>>> client = Client(LocalCluster(n_workers=4))                # doctest: +SKIP
>>> result = lotwise.distributed.run(study, client, samples=10**8, seed=1)  # doctest: +SKIP

Workers rebuild the study from its design text, so the study must come from a design
file or text (:func:`lotwise.load`, :func:`lotwise.parse`, ``Design.from_file`` or
``Design.from_text``), and each worker needs lotwise installed.
"""

from __future__ import annotations

import hashlib
import math
import threading
from typing import TYPE_CHECKING, Any, Callable, Dict, Optional, Tuple

from . import _core

if TYPE_CHECKING:  # pragma: no cover
    from ._study import Result, Study

__all__ = ["run", "design_source"]

#: Studies already built on this worker process, by the digest of their design text.
_worker_studies: Dict[str, "_core.Study"] = {}
_worker_lock = threading.Lock()


def design_source(study: "Study") -> Tuple[str, str]:
    """The design text and source name a study was compiled from.

    Raises
    ------
    lotwise.RunError
        If the study was built in code, so there is no text to send to the workers.
    """
    source = getattr(study, "_design_source", None)
    if source is None:
        raise _core.RunError(
            "a distributed run sends the design text to the workers, and this study was "
            "built in code; build it from a design file or text (lotwise.load, "
            "lotwise.parse, Design.from_file or Design.from_text)"
        )
    return source


def _worker_study(text: str, name: str) -> "_core.Study":
    key = hashlib.sha256(text.encode("utf-8")).hexdigest()
    with _worker_lock:
        study = _worker_studies.get(key)
        if study is None:
            study = _core.Study(_core.parse_design(text, name))
            _worker_studies[key] = study
        return study


def _evaluate(text: str, name: str, options: "_core.RunOptions", first: int, count: int,
              ranges: bytes) -> bytes:
    """One task: chunks [first, first + count) on a worker, as bytes for the merge."""
    return _core.evaluate_chunks(_worker_study(text, name), options, first, count, ranges)


def _options(study: "Study", samples: Optional[int], seed: Optional[int], chunk_size: int,
             confidence: Optional[float], keep_samples: bool, sampler: Optional[str],
             replicates: Optional[int], histogram_bins: int,
             target_half_width: Optional[float], attribution: bool, tolerance_digits: int,
             regression_samples: int, builds_per_lot: int) -> "_core.RunOptions":
    design = study.design
    o = _core.RunOptions()
    o.samples = int(samples if samples is not None else design.samples)
    o.seed = int(seed if seed is not None else design.seed)
    o.chunk_size = int(chunk_size)
    o.confidence = float(confidence if confidence is not None else design.confidence)
    o.keep_samples = bool(keep_samples)
    o.sampler = sampler if sampler is not None else design.sampler
    o.replicates = int(replicates if replicates is not None else design.replicates)
    o.histogram_bins = int(histogram_bins)
    o.target_half_width = float(
        target_half_width if target_half_width is not None else design.target_half_width)
    o.attribution = bool(attribution)
    o.tolerance_digits = int(tolerance_digits)
    o.regression_samples = int(regression_samples)
    o.builds_per_lot = int(builds_per_lot)
    return o


def run(study: "Study", client: Any, *, samples: Optional[int] = None,
        seed: Optional[int] = None, chunk_size: int = 1024,
        chunks_per_task: Optional[int] = None, max_in_flight: Optional[int] = None,
        confidence: Optional[float] = None, keep_samples: bool = False,
        sampler: Optional[str] = None, replicates: Optional[int] = None,
        histogram_bins: int = 4096, target_half_width: Optional[float] = None,
        attribution: bool = True, tolerance_digits: int = 0,
        regression_samples: int = 10000, builds_per_lot: int = 0,
        progress: Optional[Callable[[int, int], None]] = None) -> "Result":
    """Run a study's Monte Carlo analysis on a ``dask.distributed`` client.

    Parameters
    ----------
    study : Study
        Built from a design file or text (see the module notes).
    client : dask.distributed.Client
    samples, seed, chunk_size, confidence, keep_samples, sampler, replicates,
    histogram_bins, target_half_width, attribution, tolerance_digits, regression_samples,
    builds_per_lot
        As for :meth:`Study.run`; the same values give the same answer, bit for bit.
    chunks_per_task : int, optional
        Chunks each task evaluates (default: enough for about eight tasks per worker,
        at most 256 chunks).
    max_in_flight : int, optional
        Tasks submitted but not yet merged (default: four per worker); bounds the memory
        the driver holds for out-of-order pieces.
    progress : callable, optional
        Called as ``progress(done, total)`` in this process after each merged piece.

    Returns
    -------
    Result
        Marked incomplete (``complete`` False) only if the run was stopped with Ctrl-C;
        an adaptive run that met its target is complete and has ``target_met`` set.
    """
    from dask.distributed import as_completed  # imported here: Dask is optional

    from ._study import Result

    text, name = design_source(study)
    core_study = study._core
    options = _options(study, samples, seed, chunk_size, confidence, keep_samples, sampler,
                       replicates, histogram_bins, target_half_width, attribution,
                       tolerance_digits, regression_samples, builds_per_lot)
    merger = _core.ChunkedRun(core_study, options)
    total = merger.chunks
    workers = max(1, len(client.scheduler_info().get("workers", {})))
    if chunks_per_task is None:
        chunks_per_task = max(1, min(256, math.ceil(total / (8 * workers))))
    if max_in_flight is None:
        max_in_flight = 4 * workers
    if chunks_per_task < 1 or max_in_flight < 1:
        raise _core.RunError("chunks_per_task and max_in_flight must be at least 1")

    def report() -> None:
        if progress is not None:
            progress(merger.merged, total)

    # The first chunk sets every histogram's range; the others need those ranges.
    first = client.submit(_evaluate, text, name, options, 0, 1, b"", pure=False)
    merger.add(first.result())
    report()
    ranges = merger.ranges() if options.histogram_bins > 0 else b""

    next_chunk = 1
    pending = as_completed()
    in_flight = []

    def submit_more() -> None:
        nonlocal next_chunk
        while next_chunk < total and len(in_flight) < max_in_flight:
            count = min(chunks_per_task, total - next_chunk)
            future = client.submit(_evaluate, text, name, options, next_chunk, count, ranges,
                                   pure=False)
            in_flight.append(future)
            pending.add(future)
            next_chunk += count

    submit_more()
    try:
        for future in pending:
            in_flight.remove(future)
            if not merger.finished:
                merger.add(future.result())
                report()
            if merger.finished:
                break
            submit_more()
    except KeyboardInterrupt:
        import warnings

        warnings.warn(
            f"distributed run interrupted: returning the first {merger.merged} of {total} "
            "chunks, marked incomplete", RuntimeWarning, stacklevel=2)
    finally:
        for future in in_flight:
            future.cancel()
    return Result(study, merger.result(), keep_samples)
