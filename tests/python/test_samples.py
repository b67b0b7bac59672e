"""Per-build arrays kept with keep_samples=True: shapes, types, views and consistency."""

from __future__ import annotations

import gc

import numpy as np
import pytest

import lotwise


def spec_passes(result: lotwise.Result, values: np.ndarray) -> np.ndarray:
    """Each build's pass flag recomputed in numpy from the specs' limits."""
    names = result.measurement_names
    ok = np.ones(values.shape[0], dtype=bool)
    for spec in result.specs:
        column = values[:, names.index(spec.measurement)]
        low = -np.inf if spec.min is None else spec.min
        high = np.inf if spec.max is None else spec.max
        ok &= (column >= low) & (column <= high)  # NaN compares false: it fails
    return ok


@pytest.fixture(params=["difference-amplifier", "1pct", "0.1pct"])
def kept(request, difference_amplifier_run, example_runs):
    if request.param == "difference-amplifier":
        return difference_amplifier_run
    return example_runs[request.param][1]


def test_shapes_and_types(kept):
    values = kept.values
    assert values.shape == (kept.samples, len(kept.measurement_names))
    assert values.dtype == np.float64
    assert values.flags.c_contiguous
    passes = kept.passes
    assert passes.shape == (kept.samples,)
    assert passes.dtype == np.bool_
    for name in kept.measurement_names:
        column = kept.samples_of(name)
        assert column.shape == (kept.samples,)
        assert column.dtype == np.float64


def test_passes_agree_with_the_specs_evaluated_in_numpy(kept):
    recomputed = spec_passes(kept, kept.values)
    np.testing.assert_array_equal(kept.passes, recomputed)
    assert int(kept.passes.sum()) == kept.passed
    names = kept.measurement_names
    for spec in kept.specs:
        column = kept.values[:, names.index(spec.measurement)]
        low = -np.inf if spec.min is None else spec.min
        high = np.inf if spec.max is None else spec.max
        assert int(((column >= low) & (column <= high)).sum()) == spec.passed


def test_columns_are_the_named_measurements(kept):
    for j, name in enumerate(kept.measurement_names):
        np.testing.assert_array_equal(kept.samples_of(name), kept.values[:, j])


def test_arrays_are_read_only_views(kept):
    values = kept.values
    assert not values.flags.writeable
    assert not kept.passes.flags.writeable
    with pytest.raises(ValueError):
        values[0, 0] = 1.0
    # Two reads share the result's storage: no copy is made.
    assert np.shares_memory(values, kept.values)
    assert np.shares_memory(kept.samples_of(kept.measurement_names[0]), values)


def test_views_keep_the_result_alive(difference_amplifier):
    result = difference_amplifier.run(samples=3000, seed=9, keep_samples=True)
    values = result.values
    passes = result.passes
    expected_values = values.copy()
    expected_passes = passes.copy()
    del result
    gc.collect()
    # Reuse the freed memory, if it had been freed.
    for _ in range(20):
        difference_amplifier.run(samples=3000, seed=10, keep_samples=True)
    np.testing.assert_array_equal(values, expected_values)
    np.testing.assert_array_equal(passes, expected_passes)


def test_kept_samples_do_not_change_the_statistics(difference_amplifier):
    plain = difference_amplifier.run(samples=2500, seed=4)
    kept = difference_amplifier.run(samples=2500, seed=4, keep_samples=True)
    assert plain.passed == kept.passed
    assert plain.measurements == kept.measurements
    assert plain.specs == kept.specs


def test_unevaluated_builds_are_nan_rows_that_fail():
    # A normal spread of 300 % at 1 sigma draws many negative resistances: those builds
    # cannot be evaluated, must count as failing and show as NaN rows.
    d = lotwise.Design("wide spread")
    d.voltage_source("VIN", "in", "gnd", 1.0)
    d.resistor("R1", "in", "out", "1k")
    d.resistor("R2", "out", "gnd", "1k")
    d.vary("R1", 3.0, sigmas=1)
    d.measure("vout", "node_voltage", output="out")
    d.spec("vout", max=2.0)
    result = d.compile().run(samples=2000, seed=1, keep_samples=True)
    bad = np.isnan(result.values).any(axis=1)
    # P(R1 <= 0) = Phi(-1/3) = 0.3694 (standard normal CDF; common practice).
    assert bad.sum() == result.invalid_values + result.singular
    assert 0.33 < bad.mean() < 0.41
    assert not result.passes[bad].any()
    assert result.passes[~bad].all()  # 0 < vout < 1 V for every positive R1
    assert result.measurements["vout"].count == int((~bad).sum())
    assert result.passed == int((~bad).sum())


def test_values_follow_the_divider_formula():
    # Each build's value, recomputed in numpy from its own draw: a divider
    # vout = VIN R2 / (R1 + R2) (Ohm's law). R1 alone varies, so R1 = VIN R2 / vout - R2
    # recovers the draw, which must be normal with the stated spread.
    d = lotwise.Design("divider")
    d.voltage_source("VIN", "in", "gnd", 2.0)
    d.resistor("R1", "in", "out", "10k")
    d.resistor("R2", "out", "gnd", "10k")
    d.vary("R1", "3%")  # 3 % at 3 sigma: sigma = 100 ohm
    d.measure("vout", "node_voltage", output="out")
    result = d.compile().run(samples=20000, seed=8, keep_samples=True)
    r1 = 2.0 * 10e3 / result.samples_of("vout") - 10e3
    assert np.mean(r1) == pytest.approx(10e3, abs=4 * 100 / np.sqrt(20000))
    # Standard error of a sample standard deviation: sigma / sqrt(2 (n - 1)) (common practice).
    assert np.std(r1, ddof=1) == pytest.approx(100.0, abs=4 * 100 / np.sqrt(2 * 19999))
