"""The package surface: numbers, progress, interruption, threads, descriptions."""

from __future__ import annotations

import _thread
import doctest
import threading

import numpy as np
import pytest

import lotwise


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("4.99k", 4990.0), ("100n", 100e-9), ("2.2u", 2.2e-6), ("2.2uF", 2.2e-6), ("1e-3", 1e-3),
        ("4k7", 4700.0), ("2R2", 2.2), ("1M5", 1.5e6),  # RKM codes, source: IEC 60062:2016
        ("10 ohm", 10.0), ("-50m", -0.05), ("3", 3.0),
    ],
)
def test_parse_value(text, expected):
    assert lotwise.parse_value(text) == pytest.approx(expected, rel=1e-15)


@pytest.mark.parametrize(
    ("text", "expected"),
    [("1%", (0.01, True)), ("0.1 %", (0.001, True)), ("50ppm", (50e-6, True)),
     ("100u", (100e-6, False)), ("2", (2.0, False))],
)
def test_parse_quantity(text, expected):
    value, relative = lotwise.parse_quantity(text)
    assert value == pytest.approx(expected[0], rel=1e-15)
    assert relative is expected[1]


def test_format_si():
    assert lotwise.format_si(4990.0) == "4.99k"
    assert lotwise.format_si(1.5e-9, 3) == "1.5n"
    assert lotwise.parse_value(lotwise.format_si(47e3)) == 47e3


def test_version_and_exports():
    assert lotwise.__version__ == "0.1.0"
    for name in lotwise.__all__:
        assert hasattr(lotwise, name), name
    # Every public callable documents itself.
    for name in ("load", "parse", "Design", "Study", "Result", "clopper_pearson", "wilson",
                 "parse_value"):
        assert getattr(lotwise, name).__doc__


def test_progress_reports_reach_the_total(difference_amplifier):
    calls = []
    result = difference_amplifier.run(samples=5000, chunk_size=500,
                                      progress=lambda done, total: calls.append((done, total)))
    assert calls, "progress was never called"
    assert calls[-1] == (5000, 5000)
    done = [c[0] for c in calls]
    assert done == sorted(done)
    assert result.complete


def test_exception_in_progress_stops_the_run(difference_amplifier):
    class Enough(Exception):
        pass

    def progress(done, total):
        raise Enough(done)

    with pytest.raises(Enough):
        difference_amplifier.run(samples=10**12, progress=progress)


def test_keyboard_interrupt_stops_a_long_run(difference_amplifier):
    # A run of 10^12 builds takes days; Ctrl-C (simulated) must end it promptly and
    # return the partial result, marked incomplete, with a warning.
    timer = threading.Timer(0.3, _thread.interrupt_main)
    timer.start()
    try:
        with pytest.warns(lotwise.IncompleteRunWarning):
            result = difference_amplifier.run(samples=10**12)
    finally:
        timer.cancel()
    assert not result.complete and result.interrupted
    assert 0 < result.samples < result.requested


def test_concurrent_runs_share_one_study(difference_amplifier):
    # The study is immutable and run() releases the GIL: runs from several Python
    # threads at once must each give the serial answer.
    serial = difference_amplifier.run(samples=3000, seed=21, threads=1, keep_samples=True)
    results = [None] * 4

    def work(i):
        results[i] = difference_amplifier.run(samples=3000, seed=21, threads=1, keep_samples=True)

    workers = [threading.Thread(target=work, args=(i,)) for i in range(4)]
    for w in workers:
        w.start()
    for w in workers:
        w.join()
    for r in results:
        np.testing.assert_array_equal(r.values, serial.values)


def test_study_and_design_descriptions(difference_amplifier):
    assert difference_amplifier.nodes == ["in_p", "in_n", "p", "n", "out"]
    assert repr(difference_amplifier).startswith("<lotwise.Study 'Difference amplifier, gain 10'")
    d = difference_amplifier.design
    assert repr(d) == ("<lotwise.Design 'Difference amplifier, gain 10': 7 parts, 3 variations, "
                       "4 measurements, 3 specs>")
    assert (d.samples, d.seed, d.threads) == (4000, 11, 0)
    assert d.measurement_names == ["gain", "cmrr", "offset", "vout"]


def test_evaluate_accepts_vectors_and_mappings(difference_amplifier):
    theta = difference_amplifier.nominal_parameters
    by_vector = difference_amplifier.evaluate(theta)
    assert by_vector == difference_amplifier.nominal_values
    theta[difference_amplifier.parameter_names.index("R2")] = 110e3
    assert difference_amplifier.evaluate(theta) == difference_amplifier.evaluate({"R2": 110e3})
    assert difference_amplifier.evaluate(list(theta)) == difference_amplifier.evaluate({"R2": "110k"})


def test_node_voltage_and_operating_point_agree(difference_amplifier):
    # vout at the operating point: VP = 50 mV, VN = -50 mV, gain about 10 -> about 1 V.
    op = difference_amplifier.operating_point()
    # Two solver paths (the study's prepared factorisation, the plain operating point)
    # agree to rounding.
    assert op["out"] == pytest.approx(difference_amplifier.nominal_values["vout"], rel=1e-13)
    assert op["out"] == pytest.approx(1.0, rel=1e-3)
    assert op["in_p"] == 0.05 and op["in_n"] == -0.05


@pytest.mark.parametrize("module", ["lotwise", "lotwise._design"])
def test_docstring_examples_run(module):
    import importlib

    failures, tried = doctest.testmod(importlib.import_module(module), optionflags=doctest.ELLIPSIS)
    assert failures == 0
    assert tried > 0


def test_study_constructor_takes_a_design():
    from conftest import build_difference_amplifier

    study = lotwise.Study(build_difference_amplifier())
    assert study.measurement_names == ["gain", "cmrr", "offset", "vout"]
    with pytest.raises(TypeError, match="Study\\(\\) takes a lotwise.Design"):
        lotwise.Study("design.toml")
