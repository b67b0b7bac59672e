"""Worst case (EVA, RSS, corners) and parameter sweeps from Python, with their tables."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

import lotwise


def series_sources() -> lotwise.Design:
    """V(out) = V1 + V2: a measurement exactly linear in two normal parameters."""
    d = lotwise.Design(title="two sources in series")
    d.voltage_source("V1", "a", "gnd", 1.0)
    d.voltage_source("V2", "out", "a", 2.0)
    d.resistor("RL", "out", "gnd", "10k")
    d.vary("V1", "30m")   # sd 10 mV
    d.vary("V2", "60m")   # sd 20 mV
    d.measure("vout", "node_voltage", output="out")
    d.spec("vout", min=2.95, max=3.05)
    return d


def test_linear_measurement_rss_eva_and_corners():
    # For a linear measurement of normal parameters: RSS equals the exact standard
    # deviation sqrt(0.01^2 + 0.02^2), EVA equals the exhaustive-corner extreme
    # 3 +- (0.03 + 0.06), and the Monte Carlo sd agrees within its sampling error.
    study = series_sources().compile()
    w = study.worst_case()
    m = w.measurements["vout"]
    exact_sd = math.hypot(0.01, 0.02)
    assert m.rss_std_dev == pytest.approx(exact_sd, rel=1e-6)
    assert m.rss_half_width == pytest.approx(math.hypot(0.03, 0.06), rel=1e-6)
    assert (m.low, m.high) == pytest.approx((3 - 0.09, 3 + 0.09), abs=1e-9)
    assert w.exhaustive and w.corners == 4
    assert (m.corner_low, m.corner_high) == pytest.approx((m.low, m.high), abs=1e-12)
    assert m.sensitivities == pytest.approx({"V1": 1.0, "V2": 1.0}, rel=1e-6)
    assert m.variance_shares == pytest.approx({"V1": 0.2, "V2": 0.8}, rel=1e-6)
    n = 40000
    r = study.run(samples=n, seed=12)
    sd = r.measurements["vout"].std_dev
    # Standard error of a normal sample sd: sd / sqrt(2 (n - 1)); allow 4 of them.
    assert abs(sd - exact_sd) < 4 * exact_sd / math.sqrt(2 * (n - 1))
    tolerances = {p.name: p for p in study.parameter_tolerances()}
    assert tolerances["V2"].low == pytest.approx(1.94)
    assert tolerances["V2"].std_dev == pytest.approx(0.02)
    frame = w.to_frame()
    assert frame.loc["vout", "high"] == pytest.approx(3.09)
    assert list(w.sensitivities_frame().columns) == ["V1", "V2"]
    assert w.variance_shares_frame().loc["vout"].sum() == pytest.approx(1.0)
    text = w.table(r)
    assert "vout" in text and "V2" in text


def test_difference_amplifier_cmrr_worst_case():
    # Worst-case CMRR of a difference amplifier of gain G with resistors of tolerance t:
    # (1 + G) / (4 t) to first order (Pallas-Areny & Webster, IEEE Trans. Instrum. Meas.
    # 40(4), 1991).
    g, t = 10.0, 0.001
    d = lotwise.Design()
    d.voltage_source("VP", "in_p", "gnd", 0.0)
    d.voltage_source("VN", "in_n", "gnd", 0.0)
    d.opamp("U1", "p", "n", "out")
    d.resistor("R1", "in_n", "n", "10k")
    d.resistor("R2", "n", "out", "100k")
    d.resistor("R3", "in_p", "p", "10k")
    d.resistor("R4", "p", "gnd", "100k")
    d.vary("R*", t, distribution="uniform")
    d.measure("cmrr", "cmrr", inputs=("VP", "VN"), output="out")
    m = d.compile().worst_case().measurements["cmrr"]
    assert m.through_common_mode
    assert m.low == pytest.approx(20 * math.log10((1 + g) / (4 * t)), abs=0.05)
    assert math.isinf(m.high) or m.high > 150


def test_sweep_points_equal_runs_of_the_changed_design():
    base = series_sources()
    study = base.compile()
    sweep = study.sweep(tolerance=("V2", ["30m", "60m", "90m"]), samples=3000, seed=5)
    assert len(sweep) == 3 and sweep.complete
    assert sweep.axes[0].setting == "tolerance"
    assert sweep.axes[0].values == pytest.approx((0.03, 0.06, 0.09))
    # Common random numbers: a point is the run of the design with that setting.
    changed = lotwise.Design()
    changed.voltage_source("V1", "a", "gnd", 1.0)
    changed.voltage_source("V2", "out", "a", 2.0)
    changed.resistor("RL", "out", "gnd", "10k")
    changed.vary("V1", "30m")
    changed.vary("V2", "90m")
    changed.measure("vout", "node_voltage", output="out")
    changed.spec("vout", min=2.95, max=3.05)
    alone = changed.compile().run(samples=3000, seed=5)
    setting, last = list(sweep)[-1]
    assert setting == pytest.approx(0.09)
    assert last.passed == alone.passed
    assert last.measurements["vout"].mean == alone.measurements["vout"].mean
    yields = [r.yield_fraction for _, r in sweep]
    assert yields == sorted(yields, reverse=True)
    frame = sweep.to_frame()
    assert list(frame["V2 tolerance"]) == pytest.approx([0.03, 0.06, 0.09])
    assert {"yield_fraction", "low", "high", "wilson_low", "jeffreys_high", "vout mean",
            "vout std_dev"} <= set(frame.columns)
    assert "V2 tolerance" in sweep.table()
    with pytest.raises(lotwise.Error, match="point of a sweep"):
        last.summary()


def test_two_axis_sweep_and_report_section():
    study = series_sources().compile()
    sweep = study.sweep(nominal=("V2", [1.98, 2.0]), tolerance=("V1", ["1%", "3%"]),
                        samples=1000, seed=1)
    assert [a.label for a in sweep.axes] == ["V2 nominal", "V1 tolerance"]
    assert [s for s, _ in sweep.points] == [(1.98, 0.01), (1.98, 0.03), (2.0, 0.01), (2.0, 0.03)]
    run = study.run(samples=1000, seed=1)
    report = json.loads(run.to_json(worst_case=study.worst_case(), sweep=sweep))
    assert "sweep" in report and "worst_case" in report


def test_sweep_axes_from_the_design():
    d = series_sources()
    d.sweep_axis(["30m", "90m"], tolerance="V2")
    assert d.sweep_axes == [("tolerance", "V2", pytest.approx([0.03, 0.09]))]
    sweep = d.compile().sweep(samples=500)
    assert len(sweep) == 2
    with pytest.raises(TypeError, match="exactly one of nominal= or tolerance="):
        d.sweep_axis([1], nominal="V1", tolerance="V1")
    with pytest.raises(lotwise.DesignError, match="no variation covers 'RL'"):
        d.compile().sweep(tolerance=("RL", ["1%"]), samples=100)
    with pytest.raises(lotwise.DesignError, match="give nominal=, tolerance= or axes="):
        series_sources().compile().sweep(samples=100)


def test_progress_of_a_sweep_covers_every_point():
    calls = []
    study = series_sources().compile()
    study.sweep(nominal=("V2", [1.0, 2.0, 3.0]), samples=2000, chunk_size=500,
                progress=lambda done, total: calls.append((done, total)))
    assert calls and calls[-1] == (6000, 6000)
    done = [c[0] for c in calls]
    assert done == sorted(done)


def test_sweep_result_feeds_the_yield_plot_helper():
    pytest.importorskip("matplotlib")
    import matplotlib

    matplotlib.use("Agg")
    from lotwise import plots

    sweep = series_sources().compile().sweep(tolerance=("V2", ["30m", "60m"]), samples=500)
    fig, ax = plots.yield_sweep(sweep)
    assert len(ax.lines) >= 1
    np.testing.assert_allclose(ax.lines[0].get_xdata(), [0.03, 0.06])
    import matplotlib.pyplot as plt

    plt.close(fig)
