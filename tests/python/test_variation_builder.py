"""The variation model through the Python builder: laws, lots, matched networks,
correlation, temperature coefficients and operating temperatures, run settings and the
E-series helpers."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import lotwise


def divider(**vary) -> lotwise.Design:
    """VOUT = 10 V * R2 / (R1 + R2) with R1 = R2 = 10k, nothing varied yet."""
    d = lotwise.Design(title="divider")
    d.voltage_source("V1", "top", "gnd", 10.0)
    d.resistor("R1", "top", "mid", "10k")
    d.resistor("R2", "mid", "gnd", "10k")
    d.measure("vout", "node_voltage", output="mid")
    return d


def single_resistor() -> lotwise.Design:
    # V(out) = 1 mA * R1: the measurement is the resistor's value in kilo-volts per ohm.
    d = lotwise.Design()
    d.current_source("I1", "gnd", "out", 1e-3)
    d.resistor("R1", "out", "gnd", "1k")
    d.measure("v", "node_voltage", output="out")
    return d


@pytest.mark.parametrize(
    ("law", "kwargs", "sd"),
    [
        # Standard deviations of the laws on +-t (t = 10 % of 1 kohm, V = 1 mA R):
        # uniform t/sqrt(3), triangular t/sqrt(6) (closed forms of the laws).
        ("uniform", {}, 0.1 / math.sqrt(3)),
        ("triangular", {}, 0.1 / math.sqrt(6)),
        # normal cut at +-3 sigma: sigma * sqrt(1 - 2*3*phi(3)/(2 Phi(3) - 1)),
        # from scipy.stats.truncnorm.
        ("truncated_normal", {}, stats.truncnorm.std(-3, 3) * 0.1 / 3),
    ],
)
def test_laws_have_their_standard_deviation(law, kwargs, sd):
    d = single_resistor()
    d.vary("R1", "10%", distribution=law, **kwargs)
    r = d.compile().run(samples=40000, seed=1)
    m = r.measurements["v"]
    assert m.mean == pytest.approx(1.0, abs=4 * sd / math.sqrt(40000))
    # The sample sd of 4e4 draws lies within a few percent of the law's.
    assert m.std_dev == pytest.approx(sd, rel=0.03)
    assert m.min >= 0.9 - 1e-12 and m.max <= 1.1 + 1e-12


def test_binned_parts_avoid_the_inner_band():
    d = single_resistor()
    d.vary("R1", "J", distribution="binned", inner_tolerance="F")
    r = d.compile().run(samples=5000, seed=2, keep_samples=True)
    dev = np.abs(r.samples_of("v") - 1.0)
    assert dev.min() >= 0.01 - 1e-12 and dev.max() <= 0.05 + 1e-12


def test_fixed_with_tempco_moves_only_with_temperature():
    # 100 ppm/K from 25 degC: at 125 degC the value is 1k * (1 + 100e-6 * 100) = 1.01k.
    d = single_resistor()
    d.vary("R1", distribution="fixed", tempco="100ppm/K")
    d.set_temperature(operating=[-25, 25, 125])
    r = d.compile().run(samples=10, seed=1, keep_samples=True)
    temps = r.temperatures
    assert [t.temperature for t in temps] == [-25, 25, 125]
    means = [t.measurements["v"].mean for t in temps]
    assert means == pytest.approx([1 - 0.005, 1.0, 1.01], rel=1e-12)
    assert r.values.shape == (30, 1)
    frame = r.samples_frame()
    assert frame.index.names == ["build", "temperature"]
    assert frame.loc[(0, 125), "v"] == pytest.approx(1.01, rel=1e-12)
    assert list(r.temperatures_frame().index) == [-25, 25, 125]


def test_lot_deviation_is_shared_within_a_build():
    # R1 and R2 share a lot deviation and have no own spread: the divider ratio is exact.
    d = divider()
    d.vary(["R1", "R2"], "0.01%", lot_tolerance="5%")
    r = d.compile().run(samples=3000, seed=4)
    assert r.measurements["vout"].std_dev < 1e-3
    assert any(c.startswith("lot of") for c in d.compile().coordinate_names)


def test_matched_network_tracks_the_ratio():
    # Each member spreads 1 % but the ratio only 0.01 %: V = 5 V to within ~0.01 %/2.
    d = divider()
    d.vary("R*", "1%", ratio_tolerance="0.01%")
    r = d.compile().run(samples=5000, seed=6)
    assert r.measurements["vout"].std_dev < 5 * 0.0001 / 3 * 5 / 2
    with pytest.raises(lotwise.DesignError, match="ratio_tolerance"):
        bad = divider()
        bad.vary("R*", "1%", distribution="uniform", ratio_tolerance="0.01%")
        bad.compile()


def test_correlation_sets_the_correlation_of_normal_values():
    # Two normal parameters with copula coefficient 0.8: their values correlate at 0.8
    # (Gaussian copula of normal margins), checked on the samples via the divider:
    # Var(R1 - R2) = 2 s^2 (1 - rho).
    d = divider()
    d.vary("R*", "3%")
    d.correlate(["R1", "R2"], 0.8)
    r = d.compile().run(samples=40000, seed=3)
    # vout = 10 R2 / (R1 + R2) ~ 5 + 2.5 (dR2 - dR1)/R: sd = 2.5 * 0.01 * sqrt(2 (1 - rho)).
    assert r.measurements["vout"].std_dev == pytest.approx(2.5 * 0.01 * math.sqrt(0.4), rel=0.03)
    assert d.correlations == [{"parameters": ["R1", "R2"], "coefficient": 0.8}]
    bad = divider()
    bad.vary("R*", "3%")
    bad.correlate(["R1", "R2"], 1.0)
    with pytest.raises(lotwise.DesignError):
        bad.compile()


def test_drawn_temperature_range():
    d = single_resistor()
    d.vary("R1", distribution="fixed", tempco="1000ppm/K")
    d.set_temperature(range=(-40, 85))
    assert d.temperature["drawn"] and (d.temperature["low"], d.temperature["high"]) == (-40, 85)
    r = d.compile().run(samples=20000, seed=1)
    m = r.measurements["v"]
    # Uniform temperature: the value spans 1 + 1e-3 (T - 25) over [-40, 85].
    assert m.min >= 1 + 1e-3 * (-65) - 1e-12 and m.max <= 1 + 1e-3 * 60 + 1e-12
    assert m.mean == pytest.approx(1 + 1e-3 * (22.5 - 25), abs=0.002)
    with pytest.raises(lotwise.DesignError, match="operating or range"):
        d.set_temperature(operating=[25], range=(0, 1))


def test_vary_records_every_key_and_checks_kinds():
    d = divider()
    d.vary("R*", "J", distribution="binned", inner_tolerance="F", lot_tolerance="1%",
           lot_distribution="uniform", tempco="50ppm/K", tempco_tolerance="10ppm")
    v = d.variations[0]
    assert v["tolerance"] == 0.05 and v["inner_tolerance"] == 0.01 and v["lot_tolerance"] == 0.01
    assert v["lot_distribution"] == "uniform" and v["tempco"] == pytest.approx(50e-6)
    assert v["tempco_tolerance"] == pytest.approx(10e-6) and v["tempco_relative"] is True
    with pytest.raises(lotwise.DesignError, match="lot_tolerance must be relative"):
        d.vary("V1", "1%", lot_tolerance="10m")
    with pytest.raises(lotwise.DesignError, match="tempco_tolerance must be given like tempco"):
        d.vary("V1", "1%", tempco="50ppm", tempco_tolerance="1uV/K")
    with pytest.raises(lotwise.DesignError, match="fixed parameter takes no tolerance"):
        d.vary("V1", "1%", distribution="fixed")
    with pytest.raises(TypeError, match="give a tolerance"):
        d.vary("V1")
    with pytest.raises(lotwise.DesignError, match="unknown distribution 'gauss'"):
        d.vary("V1", "1%", distribution="gauss")
        d.compile()


def test_run_settings_are_the_defaults_of_a_run():
    d = divider()
    d.vary("R*", "1%")
    d.sampler = "latin_hypercube"
    d.replicates = 4
    d.confidence = 0.9
    d.samples = 800
    r = d.compile().run()
    assert (r.sampler, r.replicates, r.confidence, r.requested) == ("latin_hypercube", 4, 0.9, 800)
    d.target_half_width = "2%"
    d.sampler = "monte_carlo"
    d.replicates = 0
    d.samples = 10**6
    assert d.compile().run(chunk_size=256).target_met
    with pytest.raises(lotwise.RunError, match="unknown sampler"):
        d.sampler = "random"
    with pytest.raises(lotwise.RunError, match="confidence"):
        d.confidence = 1.5


def test_preferred_values():
    # IEC 60063: E12 is 1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2.
    assert lotwise.series_decade("E12").tolist() == pytest.approx(
        [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2])
    assert lotwise.preferred_values("E6", 1e3, 1e4).tolist() == pytest.approx(
        [1e3, 1.5e3, 2.2e3, 3.3e3, 4.7e3, 6.8e3, 1e4])
    # E96 is round(100 * 10^(i/96)) in three digits (IEC 60063): 4.87 is i = 66.
    assert lotwise.nearest_preferred(4830, "E96") == pytest.approx(4870)
    assert round(100 * 10 ** (66 / 96)) == 487
    assert lotwise.is_preferred(4990, "E96") and not lotwise.is_preferred(5000, "E96")
    assert lotwise.tolerance_of_letter("F") == 0.01 and lotwise.letter_of_tolerance(0.001) == "B"
    with pytest.raises(lotwise.DesignError, match="E24"):
        lotwise.series_decade("E25")


def test_design_text_is_kept_until_the_design_changes():
    # lotwise.distributed sends this text to its workers; a change in code must drop it.
    from conftest import DIFFERENCE_AMPLIFIER_TOML, EXAMPLE_FILES

    study = lotwise.parse(DIFFERENCE_AMPLIFIER_TOML, "diff.toml")
    assert study._design_source == (DIFFERENCE_AMPLIFIER_TOML, "diff.toml")
    path = EXAMPLE_FILES["1pct"]
    assert lotwise.load(path)._design_source[0] == path.read_text(encoding="utf-8")
    d = study.design
    assert d.compile()._design_source is not None
    d.seed = 5
    assert d.compile()._design_source is None
    d = lotwise.Design.from_text(DIFFERENCE_AMPLIFIER_TOML)
    d.spec("vout", max=2)
    assert d.compile()._design_source is None
    assert divider().compile()._design_source is None
