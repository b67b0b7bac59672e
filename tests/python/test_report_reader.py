"""Reading lotwise's JSON report back into Python (lotwise.report, docs/report-format.md)."""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest

import lotwise
from lotwise.report import Report, ReportError, read_report

from conftest import EXAMPLES

pd = pytest.importorskip("pandas")

# The worst-case and sweep sections come from `lotwise worst-case` / `lotwise sweep`, which the
# Python API does not produce yet: these are the examples of docs/report-format.md.
WORST_CASE = {
    "parameters": [
        {"name": "R1", "nominal": 10000, "low": 9900, "high": 10100, "std_dev": 33.33},
        {"name": "R2", "nominal": 100000, "low": 99000, "high": 101000, "std_dev": 333.3},
        {"name": "R3", "nominal": 10000, "low": 9900, "high": 10100, "std_dev": 33.33},
        {"name": "R4", "nominal": 100000, "low": 99000, "high": 101000, "std_dev": 333.3},
    ],
    "exhaustive": True,
    "corners": 16,
    "measurements": [{
        "name": "gain", "kind": "differential_gain", "nominal": 10,
        "sensitivities": [-0.000954, 9.5e-05, -4.5e-05, 4.5e-06],
        "through_common_mode": False,
        "eva": {"low": 9.80198, "high": 10.202},
        "linear": {"low": 9.8, "high": 10.2},
        "rss": {"std_dev": 0.045, "half_width": 0.135},
        "variance_shares": [0.499, 0.499, 0.001, 0.001],
        "corners": {"low": 9.80198, "high": "nan"},
    }],
}


def sweep_point(settings, samples, passed, low, high):
    bounds = {"low": low, "high": high}
    return {
        "settings": settings, "samples": samples, "passed": passed, "yield": passed / samples,
        "intervals": {"clopper_pearson": bounds, "wilson": bounds, "jeffreys": bounds},
        "specs": [{"measurement": "gain", "fraction": passed / samples, "cpk": "nan"}],
        "measurements": [{"name": "gain", "mean": 10.0, "std_dev": 0.0045,
                          "coverage": {"low": 9.991, "high": 10.009}}],
    }


SWEEP = {
    "axes": [{"setting": "tolerance", "parameter": "R*", "values": [0.001, 0.005, 0.01]}],
    "points": [
        sweep_point([0.001], 5000, 5000, 0.9993, 1.0),
        sweep_point([0.005], 5000, 4400, 0.87, 0.89),
        sweep_point([0.01], 5000, 2700, 0.53, 0.55),
    ],
}


@pytest.fixture(scope="module")
def document(difference_amplifier_run):
    return json.loads(difference_amplifier_run.to_json())


@pytest.fixture(scope="module")
def report(difference_amplifier_run) -> Report:
    return read_report(difference_amplifier_run)


def with_sections(document, **sections):
    d = copy.deepcopy(document)
    d.update(sections)
    return d


# -- what a run's report holds ---------------------------------------------------------


def test_headline_matches_the_result(report, difference_amplifier_run):
    r = difference_amplifier_run
    assert report.schema_version == 1
    assert report.lotwise_version == lotwise.__version__
    assert "model-based estimates" in report.caution
    assert report.run.samples_evaluated == r.samples == 4000
    assert report.run.seed == r.seed == 11
    assert report.run.complete is True
    assert report.yield_.passed == r.passed
    assert report.yield_.fraction == r.yield_fraction
    assert (report.yield_.interval.low, report.yield_.interval.high) == r.interval
    assert report.yield_.interval.method == "clopper_pearson"
    assert set(report.yield_.intervals) == {"clopper_pearson", "wilson", "jeffreys"}
    assert report.design.title == "Difference amplifier, gain 10"
    assert report.design.varied_parameters == tuple(r.study.varied_parameters)


def test_yield_interval_against_scipy(report):
    stats = pytest.importorskip("scipy.stats")
    # source: scipy.stats.binomtest(k, n).proportion_ci(method="exact") is Clopper-Pearson.
    k, n = report.yield_.passed, report.run.samples_evaluated
    expected = stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
    assert report.yield_.interval.low == pytest.approx(expected.low, rel=1e-9)
    assert report.yield_.interval.high == pytest.approx(expected.high, rel=1e-9)


def test_specs_match_the_result(report, difference_amplifier_run):
    assert [s.measurement for s in report.specs] == ["gain", "cmrr", "offset"]
    for got, want in zip(report.specs, difference_amplifier_run.specs):
        assert (got.min, got.max) == (want.min, want.max)
        assert got.passed == want.passed
        assert got.fraction == want.fraction
        assert (got.interval.low, got.interval.high) == want.interval
        assert got.capability is not None and got.normal_fit is not None
    cmrr = report.specs[1]
    assert cmrr.max is None  # a one-sided spec: null in the file
    assert math.isnan(cmrr.capability.cp)  # "nan" in the file: no Cp for a one-sided spec


def test_measurement_moments_match_numpy(report, difference_amplifier_run):
    for name in ("gain", "cmrr", "offset", "vout"):
        values = difference_amplifier_run.samples_of(name)
        finite = values[np.isfinite(values)]
        m = report.measurement(name)
        assert m.count == finite.size
        assert m.mean == pytest.approx(finite.mean(), rel=1e-12, abs=1e-15)
        assert m.std_dev == pytest.approx(finite.std(ddof=1), rel=1e-9)
        assert (m.min, m.max) == (finite.min(), finite.max())


def test_histogram_and_quantiles_are_consistent(report, difference_amplifier_run):
    m = report.measurement("gain")
    d = m.distribution
    h = d.histogram
    assert h.counts.sum() + h.below + h.above == m.count
    edges = h.edges
    assert len(edges) == len(h.counts) + 1 and len(h.counts) <= 64
    assert edges[0] == h.low and edges[-1] == h.high
    # The coarse bins are counts of the kept values (fine bins merged: the ends agree
    # to one fine bin width).
    values = difference_amplifier_run.samples_of("gain")
    assert h.low <= np.quantile(values, 0.001) and h.high >= np.quantile(values, 0.999)
    assert d.coverage_level == 0.95
    assert set(d.quantiles) == {0.00135, 0.025, 0.5, 0.975, 0.99865}
    # The median from the fine histogram is within one of its bins of numpy's, and a fine
    # bin is no wider than a coarse one.
    coarse_width = (h.high - h.low) / len(h.counts)
    assert d.quantiles[0.5] == pytest.approx(np.median(values), abs=coarse_width)


def test_tables(report, difference_amplifier_run):
    specs = report.spec_table()
    assert list(specs["measurement"]) == ["gain", "cmrr", "offset"]
    assert specs.loc[0, "fraction"] == difference_amplifier_run.specs[0].fraction
    assert math.isnan(specs.loc[1, "max"])
    assert {"cpk", "normal_fit", "wilson_low", "jeffreys_high"} <= set(specs.columns)
    measurements = report.measurement_table()
    assert measurements.loc["gain", "mean"] == report.measurement("gain").mean
    assert "q0.5" in measurements.columns and "coverage_low" in measurements.columns
    hist = report.histogram_table("gain")
    assert hist["count"].sum() == report.measurement("gain").distribution.histogram.counts.sum()
    attribution = report.attribution_table()
    assert list(attribution.index) == list(report.attribution.parameters)
    assert "correlation gain" in attribution.columns and "failure_shift" in attribution.columns


def test_attribution_shares_are_squared_correlations(report):
    a = report.attribution
    shares = a.variance_shares("gain")
    for p, c in zip(a.parameters, a.correlations["gain"]):
        assert shares[p] == pytest.approx(c * c)
    # source: common practice - with independent inputs and a nearly linear response the
    # squared correlations split the variance, so they sum to at most about 1.
    assert 0.5 < sum(shares.values()) < 1.05


# -- the ways in -----------------------------------------------------------------------


def test_every_source_gives_the_same_report(tmp_path, difference_amplifier_run, report):
    text = difference_amplifier_run.to_json()
    path = tmp_path / "run.json"
    path.write_text(text, encoding="utf-8")
    for source in (text, text.encode(), json.loads(text), path, str(path)):
        got = read_report(source)
        # (the dataclasses hold numpy arrays, so compare the parts without them)
        assert (got.run, got.yield_, got.design) == (report.run, report.yield_, report.design)
        pd.testing.assert_frame_equal(got.spec_table(), report.spec_table())
        pd.testing.assert_frame_equal(got.measurement_table(), report.measurement_table())
        assert got.raw == report.raw


def test_temperatures(tmp_path):
    study = lotwise.load(EXAMPLES / "bridge_stage_network.toml")
    result = study.run(samples=600, seed=3)
    report = read_report(result.to_json())
    assert report.design.temperature.operating == (-40.0, 25.0, 85.0)
    assert [t.temperature for t in report.temperatures] == [-40.0, 25.0, 85.0]
    for t in report.temperatures:
        assert t.passed >= report.yield_.passed  # passing overall means passing at each
        assert t.fraction == t.passed / report.run.samples_evaluated
        assert [s.measurement for s in t.specs] == [s.measurement for s in report.specs]
    table = report.temperature_table()
    assert list(table["temperature"]) == [-40.0, 25.0, 85.0]


def test_worst_case_section(document):
    report = read_report(with_sections(document, worst_case=WORST_CASE))
    w = report.worst_case
    assert [p.name for p in w.parameters] == ["R1", "R2", "R3", "R4"]
    m = w.measurement("gain")
    assert m.eva.low == 9.80198 and m.rss_half_width == 0.135
    assert math.isnan(m.corners.high)
    assert w.variance_shares("gain") == {"R1": 0.499, "R2": 0.499, "R3": 0.001, "R4": 0.001}
    table = report.sensitivity_table()
    assert len(table) == 4
    assert table.loc[0, "sensitivity"] == -0.000954
    assert report.worst_case_table().loc["gain", "linear_high"] == 10.2


def test_sweep_section(document):
    report = read_report(with_sections(document, sweep=SWEEP))
    sweep = report.sweep
    assert sweep.axes[0].label == "R* tolerance"
    assert [p.settings for p in sweep.points] == [(0.001,), (0.005,), (0.01,)]
    table = report.sweep_table()
    assert list(table["R* tolerance"]) == [0.001, 0.005, 0.01]
    assert list(table["yield_fraction"]) == [1.0, 0.88, 0.54]
    assert list(table["low"]) == [0.9993, 0.87, 0.53]
    assert math.isnan(sweep.points[0].specs[0]["cpk"])
    assert sweep.points[0].measurements[0]["coverage_low"] == 9.991


# -- bad input -------------------------------------------------------------------------


def test_unknown_major_version_is_refused(document):
    bad = with_sections(document, schema_version=2)
    with pytest.raises(ReportError, match=r"schema_version 2 is not supported.*version 1"):
        read_report(bad)
    # A later minor version of the same major layout is read.
    assert read_report(with_sections(document, schema_version="1.3")).yield_.passed > 0


def test_not_a_lotwise_report(document):
    with pytest.raises(ReportError, match=r"schema: expected \"lotwise.report\""):
        read_report(with_sections(document, schema="other.report"))
    with pytest.raises(ReportError, match="not valid JSON"):
        read_report("{ not json")
    with pytest.raises(TypeError, match="read_report takes"):
        read_report(42)
    with pytest.raises(FileNotFoundError):
        read_report("/nonexistent/lotwise-report.json")


def test_missing_key_names_it_and_where(document):
    bad = copy.deepcopy(document)
    del bad["specs"][1]["fraction"]
    with pytest.raises(ReportError, match=r"specs\[1\]: missing key 'fraction'"):
        read_report(bad)
    bad = copy.deepcopy(document)
    del bad["yield"]
    with pytest.raises(ReportError, match=r"missing key 'yield'"):
        read_report(bad)
    bad = copy.deepcopy(document)
    del bad["measurements"][0]["distribution"]["histogram"]["bins"]
    with pytest.raises(ReportError,
                       match=r"measurements\[0\]\.distribution\.histogram: missing key 'bins'"):
        read_report(bad)


def test_malformed_values_name_the_field(document):
    bad = copy.deepcopy(document)
    bad["measurements"][2]["mean"] = "about ten"
    with pytest.raises(ReportError,
                       match=r"measurements\[2\]\.mean: expected a number, got the string 'about ten'"):
        read_report(bad)
    bad = copy.deepcopy(document)
    bad["yield"]["passed"] = 1.5
    with pytest.raises(ReportError, match=r"yield\.passed: expected a whole number"):
        read_report(bad)
    bad = copy.deepcopy(document)
    bad["attribution"]["failure_shift"] = bad["attribution"]["failure_shift"][:-1]
    with pytest.raises(ReportError, match=r"attribution\.failure_shift: expected \d+ entries"):
        read_report(bad)
    bad = with_sections(document, sweep={"axes": [], "points": [{"settings": [1.0]}]})
    with pytest.raises(ReportError, match=r"sweep\.points\[0\]\.settings: expected 0 entries"):
        read_report(bad)


def test_absent_sections_say_so(report):
    assert report.worst_case is None and report.sweep is None and report.temperatures is None
    with pytest.raises(ReportError, match="no 'sweep' section"):
        report.sweep_table()
    with pytest.raises(ReportError, match="no measurement 'gian'"):
        report.measurement("gian")
