"""lotwise.plots on the Agg backend: the artists drawn, not just that nothing raised."""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")  # no display in tests
import matplotlib.pyplot as plt  # noqa: E402

import lotwise  # noqa: E402
from lotwise import plots  # noqa: E402
from lotwise.report import read_report  # noqa: E402

from test_report_reader import SWEEP, WORST_CASE  # noqa: E402


@pytest.fixture(autouse=True)
def close_figures():
    yield
    plt.close("all")


def by_gid(ax, gid):
    artists = [a for a in ax.get_children() if a.get_gid() == gid]
    return artists


def stairs_data(ax):
    data = one(ax, "histogram").get_data()
    return data.values, data.edges


def one(ax, gid):
    artists = by_gid(ax, gid)
    assert len(artists) == 1, f"expected one artist '{gid}', found {len(artists)}"
    return artists[0]


@pytest.fixture(scope="module")
def report_dict(difference_amplifier_run):
    return json.loads(difference_amplifier_run.to_json())


# -- histogram --------------------------------------------------------------------------


def test_histogram_of_a_result_has_limits_and_normal_fit(difference_amplifier_run):
    r = difference_amplifier_run
    fig, ax = plots.histogram(r, "gain", bins=40)
    assert fig is ax.figure
    lows, highs = by_gid(ax, "spec-min"), by_gid(ax, "spec-max")
    assert [tuple(line.get_xdata()) for line in lows] == [(9.9, 9.9)]
    assert [tuple(line.get_xdata()) for line in highs] == [(10.1, 10.1)]
    counts, edges = stairs_data(ax)
    values = r.samples_of("gain")
    assert counts.sum() == np.isfinite(values).sum()
    expected_counts, expected_edges = np.histogram(values[np.isfinite(values)], bins=40)
    np.testing.assert_array_equal(counts, expected_counts)
    np.testing.assert_allclose(edges, expected_edges)
    # The fit is n * bin width * the normal density of the values' mean and sd.
    stats = pytest.importorskip("scipy.stats")
    fit = one(ax, "normal-fit")
    x, y = fit.get_xdata(), fit.get_ydata()
    width = edges[1] - edges[0]
    mean, sd = values.mean(), values.std(ddof=1)
    # source: scipy.stats.norm.pdf as the independent density
    np.testing.assert_allclose(y, counts.sum() * width * stats.norm.pdf(x, mean, sd), rtol=1e-9)


def test_one_sided_spec_draws_one_limit(difference_amplifier_run):
    _, ax = plots.histogram(difference_amplifier_run, "cmrr", normal_fit=False)
    assert [tuple(line.get_xdata()) for line in by_gid(ax, "spec-min")] == [(46.0, 46.0)]
    assert by_gid(ax, "spec-max") == []
    assert by_gid(ax, "normal-fit") == []


def test_histogram_of_a_report_draws_its_stored_bins(difference_amplifier_run):
    report = read_report(difference_amplifier_run)
    fig, ax = plt.subplots()
    got_fig, got_ax = plots.histogram(report, "offset", ax=ax)
    assert got_ax is ax and got_fig is fig
    counts, edges = stairs_data(ax)
    h = report.measurement("offset").distribution.histogram
    np.testing.assert_array_equal(counts, h.counts)
    np.testing.assert_allclose(edges, h.edges)
    assert [line.get_xdata()[0] for line in by_gid(ax, "spec-min")] == [-0.01]
    assert [line.get_xdata()[0] for line in by_gid(ax, "spec-max")] == [0.01]
    assert ax.get_xlabel() == "offset (V)"


def test_histogram_of_plain_values_with_limits():
    values = np.array([1.0, 2.0, 2.0, 3.0, np.nan])
    _, ax = plots.histogram(values, bins=3, limits=(None, 2.5))
    counts, _ = stairs_data(ax)
    assert list(counts) == [1, 2, 1]  # the NaN is left out
    assert by_gid(ax, "spec-min") == []
    assert one(ax, "spec-max").get_xdata()[0] == 2.5


def test_histogram_needs_the_samples(difference_amplifier):
    result = difference_amplifier.run(samples=200, seed=1)
    with pytest.raises(lotwise.Error, match="keep_samples=True"):
        plots.histogram(result, "gain")


# -- yield against a swept setting ------------------------------------------------------


def band_limits(collection, x):
    """Lowest and highest y of a fill_between band at abscissa x."""
    vertices = collection.get_paths()[0].vertices
    ys = vertices[np.isclose(vertices[:, 0], x), 1]
    return ys.min(), ys.max()


def test_yield_sweep_of_a_report(report_dict):
    report = read_report(dict(report_dict, sweep=SWEEP))
    _, ax = plots.yield_sweep(report, target=0.95)
    line = one(ax, "yield")
    np.testing.assert_allclose(line.get_xdata(), [0.001, 0.005, 0.01])
    np.testing.assert_allclose(line.get_ydata(), [100.0, 88.0, 54.0])
    band = one(ax, "confidence-band")
    for point in SWEEP["points"]:
        x = point["settings"][0]
        interval = point["intervals"]["clopper_pearson"]
        low, high = interval["low"], interval["high"]
        assert band_limits(band, x) == pytest.approx((100 * low, 100 * high))
    assert one(ax, "target").get_ydata()[0] == pytest.approx(95.0)
    assert ax.get_xlabel() == "R* tolerance"


def test_yield_sweep_of_results(difference_amplifier):
    results = {t: difference_amplifier.run(samples=300, seed=5) for t in (0.5, 1.0)}
    _, ax = plots.yield_sweep(list(results.items()), percent=False)
    line = one(ax, "yield")
    np.testing.assert_allclose(line.get_ydata(), [r.yield_fraction for r in results.values()])
    band = one(ax, "confidence-band")
    for x, r in results.items():
        assert band_limits(band, x) == pytest.approx(r.interval)


def test_two_axis_sweep_draws_one_line_per_second_value(report_dict):
    points = [sweep_point for sweep_point in copy.deepcopy(SWEEP["points"])]
    second = copy.deepcopy(points)
    for p in points:
        p["settings"].append(90e3)
    for p in second:
        p["settings"].append(100e3)
        p["passed"] -= 100
        p["yield"] = p["passed"] / p["samples"]
    sweep = {"axes": SWEEP["axes"] + [{"setting": "nominal", "parameter": "R2",
                                      "values": [90e3, 100e3]}],
             "points": points + second}
    _, ax = plots.yield_sweep(dict(report_dict, sweep=sweep))
    lines = by_gid(ax, "yield")
    assert [line.get_label() for line in lines] == ["R2 nominal = 90000",
                                                     "R2 nominal = 100000"]
    np.testing.assert_allclose(lines[1].get_ydata(), [98.0, 86.0, 52.0])
    assert len(by_gid(ax, "confidence-band")) == 2


def test_yield_sweep_bad_input(report_dict):
    with pytest.raises(lotwise.Error, match="no 'sweep' section"):
        plots.yield_sweep(read_report(report_dict))
    with pytest.raises(TypeError, match="not a lotwise Result"):
        plots.yield_sweep([(1.0, 0.5)])


# -- Pareto chart -----------------------------------------------------------------------


def bar_heights(ax):
    return [patch.get_height() for patch in by_gid(ax, "shares")]


def test_pareto_of_rss_shares(report_dict):
    report = read_report(dict(report_dict, worst_case=WORST_CASE))
    _, ax = plots.pareto(report, "gain")  # auto: the worst case is there
    assert bar_heights(ax) == [0.499, 0.499, 0.001, 0.001]
    assert [t.get_text() for t in ax.get_xticklabels()] == ["R1", "R2", "R3", "R4"]
    assert "RSS" in ax.get_ylabel()


def test_pareto_of_squared_correlations(difference_amplifier_run):
    report = read_report(difference_amplifier_run)
    _, ax = plots.pareto(difference_amplifier_run, "gain", top=3)
    squares = sorted((c * c for c in report.attribution.correlations["gain"]), reverse=True)
    assert bar_heights(ax) == pytest.approx(squares[:3])
    assert "correlation" in ax.get_ylabel()
    twin = [a for a in ax.figure.axes if a is not ax][0]
    running = one(twin, "cumulative").get_ydata()
    np.testing.assert_allclose(running, np.cumsum(squares[:3]))


def test_pareto_of_a_mapping_and_a_bad_basis(report_dict):
    _, ax = plots.pareto({"a": 0.1, "b": 0.7, "c": 0.2})
    assert bar_heights(ax) == [0.7, 0.2, 0.1]
    with pytest.raises(ValueError, match="basis must be"):
        plots.pareto(read_report(report_dict), "gain", basis="sobol")
    with pytest.raises(lotwise.Error, match="no 'worst_case' section"):
        plots.pareto(read_report(report_dict), "gain", basis="rss")


# -- scatter ----------------------------------------------------------------------------


def offsets(ax, gid):
    return np.asarray(one(ax, gid).get_offsets())


def test_scatter_of_arrays_marks_the_failures():
    x = np.array([1.0, 2.0, 3.0, 4.0])
    y = np.array([10.0, 20.0, 30.0, 40.0])
    passes = np.array([True, False, True, False])
    _, ax = plots.scatter(x, y, passes, xlabel="R1", ylabel="R2")
    np.testing.assert_array_equal(offsets(ax, "failing"), [[2.0, 20.0], [4.0, 40.0]])
    np.testing.assert_array_equal(offsets(ax, "passing"), [[1.0, 10.0], [3.0, 30.0]])
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("R1", "R2")


def test_scatter_of_a_result_by_measurement(difference_amplifier_run):
    r = difference_amplifier_run
    _, ax = plots.scatter(r, "gain", "offset")
    failing = offsets(ax, "failing")
    assert len(failing) == r.samples - r.passed
    np.testing.assert_array_equal(failing[:, 0], r.samples_of("gain")[~r.passes])


class _WithParameters:
    """A Result that also offers per-build parameter values."""

    def __init__(self, result, parameters):
        self._result = result
        self._parameters = parameters

    def __getattr__(self, name):
        return getattr(self._result, name)

    def parameter_values(self, name):
        return self._parameters[name]


class _WithoutParameters:
    """A Result of a lotwise without per-build parameter values."""

    def __init__(self, result):
        self._result = result

    def __getattr__(self, name):
        if name == "parameter_values":
            raise AttributeError(name)
        return getattr(self._result, name)


def test_scatter_of_a_result_by_parameter(difference_amplifier_run):
    r = difference_amplifier_run
    rng = np.random.default_rng(1)
    r1, r2 = rng.normal(size=r.samples), rng.normal(size=r.samples)
    _, ax = plots.scatter(_WithParameters(r, {"R1": r1, "R2": r2}), "R1", "R2")
    np.testing.assert_array_equal(offsets(ax, "failing")[:, 1], r2[~r.passes])


def test_scatter_without_parameter_values_says_so(difference_amplifier_run):
    with pytest.raises(lotwise.Error, match="parameter_values"):
        plots.scatter(_WithoutParameters(difference_amplifier_run), "R1", "R2")


def test_scatter_bad_input():
    with pytest.raises(TypeError, match="pass mask is missing"):
        plots.scatter([1.0], [2.0])
    with pytest.raises(ValueError, match="differ in length"):
        plots.scatter([1.0, 2.0], [2.0], np.array([True, False]))
    with pytest.raises(TypeError, match="boolean mask"):
        plots.scatter([1.0], [2.0], [1])


# -- results of the Python analyses (Study.sweep, Study.worst_case) ----------------------

needs_sweep = pytest.mark.skipif(not hasattr(lotwise.Study, "sweep"),
                                 reason="this lotwise has no Study.sweep")
needs_worst_case = pytest.mark.skipif(not hasattr(lotwise.Study, "worst_case"),
                                      reason="this lotwise has no Study.worst_case")


@needs_sweep
def test_yield_sweep_of_a_study_sweep(difference_amplifier):
    sweep = difference_amplifier.sweep(tolerance=("R*", ["0.5%", "1%"]), samples=300, seed=5)
    _, ax = plots.yield_sweep(sweep)
    points = list(sweep)
    line = one(ax, "yield")
    np.testing.assert_allclose(line.get_xdata(), [0.005, 0.01])
    np.testing.assert_allclose(line.get_ydata(), [100 * r.yield_fraction for _, r in points])
    band = one(ax, "confidence-band")
    for x, r in points:
        assert band_limits(band, x) == pytest.approx((100 * r.interval[0], 100 * r.interval[1]))
    assert ax.get_xlabel() == sweep.axes[0].label


@needs_worst_case
def test_pareto_of_a_study_worst_case(difference_amplifier):
    worst = difference_amplifier.worst_case()
    _, ax = plots.pareto(worst, "gain")
    shares = worst.measurements["gain"].variance_shares
    expected = sorted((v for v in shares.values() if math.isfinite(v)), reverse=True)
    assert bar_heights(ax) == pytest.approx(expected)
    assert "RSS" in ax.get_ylabel()
