"""The shipped load-cell amplifier examples, run end to end through the Python API."""

from __future__ import annotations

import json

import numpy as np
import pytest

import lotwise


def test_yield_is_a_proper_fraction(example_runs, example_name):
    _, result = example_runs[example_name]
    assert result.complete
    assert result.samples == result.requested == 20000  # the files' [run] samples
    assert 0 < result.passed < result.samples
    assert 0.0 < result.yield_fraction < 1.0
    assert result.yield_fraction == result.passed / result.samples


def test_interval_contains_the_yield(example_runs, example_name):
    _, result = example_runs[example_name]
    low, high = result.interval
    assert 0.0 < low < result.yield_fraction < high < 1.0
    assert result.interval == lotwise.clopper_pearson(result.passed, result.samples, 0.95)
    for spec in result.specs:
        assert spec.interval[0] <= spec.fraction <= spec.interval[1]
        assert spec.fraction == spec.passed / result.samples


def test_tighter_resistors_give_a_visibly_higher_yield(example_runs):
    _, loose = example_runs["1pct"]
    _, tight = example_runs["0.1pct"]
    # The intervals do not even overlap.
    assert tight.interval[0] > loose.interval[1]
    assert tight.yield_fraction - loose.yield_fraction > 0.2


def test_gain_spread_scales_with_resistor_tolerance(example_runs):
    # The gain depends on the resistors to first order and barely on the op-amps'
    # open-loop gain (1e6), so its standard deviation scales with the resistor
    # tolerance: first-order propagation, JCGM 100 (GUM) sec. 5.1.2. Both files draw the
    # same standard coordinates (same seed, same parameter order), so the ratio is 10
    # up to second-order terms.
    loose = example_runs["1pct"][1].measurements["gain"].std_dev
    tight = example_runs["0.1pct"][1].measurements["gain"].std_dev
    assert loose / tight == pytest.approx(10.0, rel=0.01)


@pytest.mark.parametrize("measurement", ["gain", "cmrr", "offset"])
def test_samples_match_the_reported_statistics(example_runs, example_name, measurement):
    _, result = example_runs[example_name]
    values = result.samples_of(measurement)
    stats = result.measurements[measurement]
    assert isinstance(values, np.ndarray)
    assert values.shape == (result.samples,)
    assert values.dtype == np.float64
    finite = values[np.isfinite(values)]
    assert stats.count == finite.size
    assert stats.non_finite == values.size - finite.size
    # Welford's streaming moments against numpy's two-pass ones.
    assert stats.mean == pytest.approx(np.mean(finite), rel=1e-10, abs=1e-12 * np.max(np.abs(finite)))
    assert stats.std_dev == pytest.approx(np.std(finite, ddof=1), rel=1e-9)
    assert stats.min == np.min(finite)
    assert stats.max == np.max(finite)


def test_nominal_gain_matches_the_instrumentation_amplifier_formula(example_runs, example_name):
    # Three-op-amp instrumentation amplifier G = (1 + 2 RF / RG) (R2 / R1)
    # (source: Sedra & Smith, Microelectronic Circuits, ch. 2): (1 + 99.8) * 2 = 201.6;
    # the finite open-loop gain (1e6) lowers it by about G / A0 relative.
    study, result = example_runs[example_name]
    ideal = (1 + 2 * 49.9e3 / 1e3) * (20e3 / 10e3)
    nominal = study.nominal_values["gain"]
    assert nominal == result.measurements["gain"].nominal
    assert nominal == pytest.approx(ideal, rel=5e-4)
    assert nominal < ideal


def test_json_report_agrees_with_the_result(example_runs, example_name):
    study, result = example_runs[example_name]
    report = json.loads(result.to_json())
    assert report["schema"] == "lotwise.report"
    assert report["design"]["title"] == study.title
    assert report["run"]["samples_evaluated"] == result.samples
    assert report["run"]["seed"] == result.seed == 2026
    assert report["yield"]["passed"] == result.passed
    assert report["yield"]["interval"]["low"] == result.interval[0]
    assert report["yield"]["interval"]["high"] == result.interval[1]
    assert [s["measurement"] for s in report["specs"]] == [s.measurement for s in result.specs]
    cmrr = next(s for s in report["specs"] if s["measurement"] == "cmrr")
    assert cmrr["max"] is None  # a one-sided spec
    for entry in report["measurements"]:
        stats = result.measurements[entry["name"]]
        assert entry["mean"] == stats.mean
        assert entry["count"] == stats.count


def test_summary_names_the_design_and_the_yield(example_runs, example_name):
    study, result = example_runs[example_name]
    text = result.summary()
    assert study.title in text
    assert f"{result.passed} of {result.samples}" in text
    assert str(result) == text
    assert repr(result).startswith("<lotwise.Result yield=")
    assert f"({result.passed} of {result.samples} builds, seed 2026)" in repr(result)


def test_study_describes_the_design(example_runs, example_name):
    study, _ = example_runs[example_name]
    assert study.measurement_names == ["gain", "cmrr", "offset"]
    names = study.parameter_names
    assert names[:3] == ["VBRIDGE_P", "VBRIDGE_N", "VREF"]
    assert "U1.offset" in names and "RG" in names
    nominal = study.nominal_parameters
    assert nominal.dtype == np.float64 and nominal.shape == (len(names),)
    assert nominal[names.index("RF1")] == 49.9e3
    assert nominal[names.index("U2.bias_minus")] == 1e-9  # bias_current sets both inputs
    # Resistors (7), offsets (3), open-loop gains (3), gain-bandwidths (3).
    assert len(study.varied_parameters) == 16
    assert set(study.varied_parameters) >= {"R1", "RG", "U3.offset", "U2.gain_bandwidth"}
