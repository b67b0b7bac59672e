"""Results as numpy arrays and pandas DataFrames."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pytest

import lotwise

pd = pytest.importorskip("pandas")


def test_samples_frame_matches_the_arrays(difference_amplifier_run):
    r = difference_amplifier_run
    frame = r.samples_frame()
    assert list(frame.columns) == r.measurement_names + ["passed"]
    assert frame.index.name == "build" and len(frame) == r.samples
    np.testing.assert_array_equal(frame[r.measurement_names].to_numpy(), r.values)
    np.testing.assert_array_equal(frame["passed"].to_numpy(), r.passes)
    assert frame["passed"].dtype == bool
    # Filtering works as it would on any frame: failing builds.
    assert len(frame[~frame["passed"]]) == r.samples - r.passed


def test_values_are_views_not_copies(difference_amplifier_run):
    r = difference_amplifier_run
    assert np.shares_memory(r.values, r.values)  # the same storage every time
    assert not r.values.flags.writeable and not r.values.flags.owndata
    assert np.shares_memory(r.samples_of("gain"), r.values)


def test_specs_frame(difference_amplifier_run):
    r = difference_amplifier_run
    frame = r.specs_frame()
    assert list(frame["measurement"]) == ["gain", "cmrr", "offset"]
    row = frame.iloc[0]
    spec = r.specs[0]
    assert (row["min"], row["max"], row["passed"]) == (spec.min, spec.max, spec.passed)
    assert row["wilson_low"] == spec.wilson_interval[0]
    assert row["jeffreys_high"] == spec.jeffreys_interval[1]
    assert row["cpk"] == spec.capability.cpk
    assert math.isnan(frame.iloc[1]["max"])  # cmrr has no upper limit


def test_measurements_frame(difference_amplifier_run):
    r = difference_amplifier_run
    frame = r.measurements_frame()
    assert list(frame.index) == r.measurement_names
    gain = r.measurements["gain"]
    assert frame.loc["gain", "mean"] == gain.mean and frame.loc["gain", "unit"] == "V/V"
    assert (frame.loc["gain", "coverage_low"], frame.loc["gain", "coverage_high"]) == gain.coverage


def test_result_without_kept_samples_has_no_samples_frame(difference_amplifier):
    r = difference_amplifier.run(samples=500)
    with pytest.raises(lotwise.Error, match="keep_samples=True"):
        r.samples_frame()


def test_core_imports_without_pandas():
    # pandas is imported only when a table is asked for.
    code = (
        "import sys; sys.modules['pandas'] = None\n"
        "import lotwise\n"
        "d = lotwise.Design(); d.voltage_source('V', 'a', 'gnd', 1)\n"
        "d.resistor('R', 'a', 'gnd', 1)\n"
        "d.measure('v', 'node_voltage', output='a')\n"
        "r = d.compile().run(samples=100, keep_samples=True)\n"
        "assert r.values.shape == (100, 1)\n"
        "try:\n"
        "    r.samples_frame()\n"
        "except ImportError as e:\n"
        "    assert 'pip install pandas' in str(e)\n"
        "else:\n"
        "    raise SystemExit('no ImportError')\n"
    )
    subprocess.run([sys.executable, "-c", code], check=True)
