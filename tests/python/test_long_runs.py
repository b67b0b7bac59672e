"""Long runs from Python: stopping from another thread, Ctrl-C returning a partial result,
progress bars. Every run here would take days if it were not stopped, so returning at
all is the check that the stop works; the assertions are on the result's flags and
counts (no wall-clock asserts)."""

from __future__ import annotations

import _thread
import json
import math
import signal
import threading

import numpy as np
import pytest

import lotwise

ENDLESS = 10**12  # builds: days of work


def test_stop_token_from_another_thread_returns_a_partial_result(difference_amplifier):
    token = lotwise.StopToken()
    assert not token.is_set()
    timer = threading.Timer(0.3, token.set)
    timer.start()
    try:
        with pytest.warns(lotwise.IncompleteRunWarning, match="stopped by its StopToken"):
            r = difference_amplifier.run(samples=ENDLESS, chunk_size=256, stop=token,
                                         keep_samples=False)
    finally:
        timer.cancel()
    assert token.is_set()
    assert not r.complete and not r.interrupted
    assert 0 < r.samples < r.requested == ENDLESS
    assert r.samples % 256 == 0            # whole chunks, merged in order
    assert 0 <= r.passed <= r.samples
    lo, hi = r.interval                    # a usable result: statistics of what was done
    assert lo <= r.yield_fraction <= hi
    assert r.measurements["gain"].count <= r.samples
    assert "stopped at" in repr(r)
    assert json.loads(r.to_json())["run"]["complete"] is False


def test_a_set_token_stops_the_next_run_at_once(difference_amplifier):
    token = lotwise.StopToken()
    token.set()
    with pytest.warns(lotwise.IncompleteRunWarning):
        r = difference_amplifier.run(samples=ENDLESS, stop=token)
    assert not r.complete and r.samples == 0   # stopped before its first chunk
    assert "-inf" not in str(r)                # no extremes shown for measurements never seen
    token.clear()
    r = difference_amplifier.run(samples=2000, stop=token)
    assert r.complete and r.samples == 2000


def _interrupted_run(study, trigger):
    timer = threading.Timer(0.3, trigger)
    timer.start()
    try:
        with pytest.warns(lotwise.IncompleteRunWarning, match="interrupted"):
            return study.run(samples=ENDLESS, chunk_size=512)
    finally:
        timer.cancel()


def test_ctrl_c_returns_a_partial_marked_result(difference_amplifier):
    # _thread.interrupt_main is what a kernel interrupt and Ctrl-C do: KeyboardInterrupt
    # in the main thread.
    r = _interrupted_run(difference_amplifier, _thread.interrupt_main)
    assert r.interrupted and not r.complete
    assert 0 < r.samples < r.requested and r.samples % 512 == 0
    assert "stopped at" in repr(r) and "yield" in r.summary().lower()


def test_ctrl_c_during_progress_keeps_the_samples_done(difference_amplifier):
    # A KeyboardInterrupt that lands while the progress callback runs is still Ctrl-C.
    def progress(done, total):
        raise KeyboardInterrupt

    with pytest.warns(lotwise.IncompleteRunWarning, match="interrupted"):
        r = difference_amplifier.run(samples=400_000, chunk_size=256, threads=1,
                                     keep_samples=True, progress=progress)
    assert r.interrupted and not r.complete and 0 < r.samples < r.requested
    # The kept samples are exactly the builds evaluated, in chunk order.
    assert r.values.shape == (r.samples, 4) and r.passes.shape == (r.samples,)
    assert int(r.passes.sum()) == r.passed
    whole = difference_amplifier.run(samples=r.samples, chunk_size=256, keep_samples=True)
    np.testing.assert_array_equal(r.values, whole.values)


def test_keeping_samples_of_an_endless_run_is_a_clear_error(difference_amplifier):
    # Refused before the run starts, saying how much memory it would need.
    with pytest.raises(lotwise.RunError,
                       match="keeping every sample of 1000000000000 builds needs about"):
        difference_amplifier.run(samples=ENDLESS, keep_samples=True)


def test_sigint_returns_a_partial_marked_result(difference_amplifier):
    r = _interrupted_run(difference_amplifier, lambda: signal.raise_signal(signal.SIGINT))
    assert r.interrupted and not r.complete and r.samples > 0
    assert math.isfinite(r.yield_fraction)


def test_a_later_run_is_unaffected_by_an_interrupt(difference_amplifier):
    _interrupted_run(difference_amplifier, _thread.interrupt_main)
    r = difference_amplifier.run(samples=3000, seed=21)
    assert r.complete and not r.interrupted and r.samples == 3000


def test_stop_token_stops_a_sweep(difference_amplifier):
    token = lotwise.StopToken()
    timer = threading.Timer(0.3, token.set)
    timer.start()
    try:
        with pytest.warns(lotwise.IncompleteRunWarning, match="sweep"):
            sweep = difference_amplifier.sweep(tolerance=("R*", ["0.1%", "1%", "2%"]),
                                               samples=ENDLESS, stop=token)
    finally:
        timer.cancel()
    assert not sweep.complete and len(sweep) == 3
    first = sweep.points[0][1]
    assert 0 < first.samples < ENDLESS
    assert all(r.samples == 0 for _, r in sweep.points[1:])


def test_other_threads_run_while_the_core_works(difference_amplifier):
    # The run releases the GIL: a Python thread keeps counting during it.
    count = [0]
    stop = threading.Event()

    def spin():
        while not stop.is_set():
            count[0] += 1

    token = lotwise.StopToken()
    spinner = threading.Thread(target=spin)
    spinner.start()
    threading.Timer(0.5, token.set).start()
    try:
        with pytest.warns(lotwise.IncompleteRunWarning):
            difference_amplifier.run(samples=ENDLESS, threads=1, stop=token)
    finally:
        stop.set()
        spinner.join()
    assert count[0] > 1000


def test_progress_true_draws_a_tqdm_bar(difference_amplifier, capsys):
    pytest.importorskip("tqdm")
    r = difference_amplifier.run(samples=4000, chunk_size=500, progress=True)
    assert r.complete
    err = capsys.readouterr().err
    assert "100%" in err and "4.00k/4.00k" in err


def test_progress_false_and_none_draw_nothing(difference_amplifier, capsys):
    difference_amplifier.run(samples=1000, progress=False)
    difference_amplifier.run(samples=1000, progress=None)
    assert capsys.readouterr().err == ""
    with pytest.raises(TypeError, match="progress must be"):
        difference_amplifier.run(samples=1000, progress="yes")


def test_progress_true_without_tqdm_runs_quietly(difference_amplifier, capsys, monkeypatch):
    import lotwise._run as run_module

    monkeypatch.setattr(run_module, "_tqdm", lambda: None)
    r = difference_amplifier.run(samples=1000, progress=True)
    assert r.complete and capsys.readouterr().err == ""


def test_stop_must_be_a_token(difference_amplifier):
    with pytest.raises(TypeError, match="lotwise.StopToken"):
        difference_amplifier.run(samples=100, stop=threading.Event())
    assert np.isfinite(difference_amplifier.run(samples=100).yield_fraction)


def test_progress_bar_of_an_adaptive_run_ends_full(difference_amplifier, capsys):
    pytest.importorskip("tqdm")
    r = difference_amplifier.run(samples=10**6, chunk_size=500, target_half_width="2%",
                                 progress=True)
    assert r.target_met and r.samples < r.requested
    err = capsys.readouterr().err
    assert "100%" in err
