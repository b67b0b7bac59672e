"""Decision circuits and frequency measurements from Python: output limits, trip points,
saturation, the saturating DC sweep, bandwidth, phase and gain error."""

from __future__ import annotations

import math

import numpy as np
import pytest

import lotwise


def schmitt_inverting(reference: float = 0.0) -> lotwise.Design:
    """Inverting Schmitt trigger: input on the - input, 10k / 1k positive feedback
    divider from the output (+-11 V) to the + input, its foot at `reference`."""
    d = lotwise.Design(title="inverting Schmitt trigger")
    d.voltage_source("VIN", "in", "gnd", 0.0)
    d.voltage_source("VREF", "ref", "gnd", reference)
    d.opamp("U1", "p", "in", "out", supply_high=12, supply_low=-12, headroom=1)
    d.resistor("RF", "out", "p", "10k")
    d.resistor("RG", "p", "ref", "1k")
    for kind in ("rising_threshold", "falling_threshold", "hysteresis", "threshold_centre",
                 "output_high", "output_low"):
        d.measure(kind, kind, inputs="VIN", opamp="U1")
    return d


def test_inverting_schmitt_thresholds_are_plus_minus_one_volt():
    # +-11 V output through a 10k / 1k divider: thresholds +-11 V * 1k / 11k = +-1 V.
    # Source: common practice (the Schmitt-trigger divider formula).
    v = schmitt_inverting().compile().nominal_values
    assert v["rising_threshold"] == pytest.approx(1.0, abs=1e-12)
    assert v["falling_threshold"] == pytest.approx(-1.0, abs=1e-12)
    assert v["hysteresis"] == pytest.approx(2.0, abs=1e-12)
    assert v["threshold_centre"] == pytest.approx(0.0, abs=1e-12)
    assert v["output_high"] == pytest.approx(11.0, abs=1e-12)
    assert v["output_low"] == pytest.approx(-11.0, abs=1e-12)


def test_inverting_schmitt_with_reference_offset():
    # Foot of the divider at Vr: thresholds Vr + (L - Vr) RG / (RF + RG) for L = +-11 V.
    # Source: common practice (superposition on the feedback divider).
    vr = 2.0
    v = schmitt_inverting(vr).compile().nominal_values
    assert v["rising_threshold"] == pytest.approx(vr + (11 - vr) / 11, abs=1e-12)
    assert v["falling_threshold"] == pytest.approx(vr + (-11 - vr) / 11, abs=1e-12)


def test_non_inverting_schmitt_threshold_formula():
    # Input through R1 to the + input, R2 from the output back to it, - input at 0 V:
    # the output flips where V+ = 0, i.e. at Vin = -+L R1 / R2. Source: common practice
    # (the textbook non-inverting Schmitt trigger, e.g. Sedra & Smith, from memory).
    d = lotwise.Design()
    d.voltage_source("VIN", "in", "gnd", 0.0)
    d.opamp("U1", "p", "gnd", "out", output_high=10, output_low=-5)
    d.resistor("R1", "in", "p", "10k")
    d.resistor("R2", "out", "p", "100k")
    d.measure("up", "rising_threshold", inputs="VIN", opamp="U1")
    d.measure("down", "falling_threshold", inputs="VIN", opamp="U1")
    v = d.compile().nominal_values
    assert v["up"] == pytest.approx(5 * 10e3 / 100e3, abs=1e-12)     # leaving the low limit
    assert v["down"] == pytest.approx(-10 * 10e3 / 100e3, abs=1e-12)  # leaving the high limit


def comparator() -> lotwise.Design:
    d = lotwise.Design(title="comparator against a divider")
    d.voltage_source("VIN", "in", "gnd", 1.0)
    d.voltage_source("VS", "vs", "gnd", 5.0)
    d.resistor("RA", "vs", "ref", "10k")
    d.resistor("RB", "ref", "gnd", "10k")
    d.opamp("U1", "in", "ref", "out", supply_high=5, supply_low=0)
    d.measure("trip", "rising_threshold", inputs="VIN", opamp="U1")
    d.measure("hyst", "hysteresis", inputs="VIN", opamp="U1")
    return d


def test_comparator_threshold_shifts_by_its_offset():
    # The offset sits in series with the + input: the input trips where Vin + Vos = Vref,
    # so the threshold moves by exactly -Vos. Source: common practice.
    study = comparator().compile()
    assert study.nominal_values["trip"] == pytest.approx(2.5, abs=1e-12)
    for vos in (1e-3, -2.5e-3):
        shifted = study.evaluate({"U1.offset": vos})
        assert shifted["trip"] - study.nominal_values["trip"] == pytest.approx(-vos, abs=1e-12)
    assert study.nominal_values["hyst"] == pytest.approx(0.0, abs=1e-12)


def test_trip_point_yield_against_offset_spread():
    # Offset uniform within +-10 mV, spec on the trip point +-5 mV around 2.5 V: exactly
    # the builds with |Vos| <= 5 mV pass, half of them (closed form of the uniform law).
    d = comparator()
    d.vary("U1.offset", "10m", distribution="uniform")
    d.spec("trip", min=2.495, max=2.505)
    r = d.compile().run(samples=20000, seed=3)
    lo, hi = r.interval
    assert lo < 0.5 < hi
    assert r.saturated == 0


def test_dc_sweep_agrees_with_trip_points():
    study = schmitt_inverting().compile()
    up, down = study.nominal_values["rising_threshold"], study.nominal_values["falling_threshold"]
    curve = study.dc_sweep("VIN", "out", np.linspace(-3, 3, 601))
    assert curve.opamps == ["U1"]
    assert set(curve.states["U1"]) == {"high", "low"}
    assert len(curve.input) == len(curve.value) == 2 * 601
    rising, falling = curve.crossings(0.0)
    step = 6 / 600
    assert len(rising) == 1 and len(falling) == 1
    assert abs(rising[0] - up) <= step and abs(falling[0] - down) <= step
    # Just either side of each threshold the sweep holds the expected limit.
    path = [-3, up - 1e-6, up + 1e-6, 0.0, down + 1e-6, down - 1e-6]
    t = study.dc_transfer("VIN", "out", path)
    assert list(t.states["U1"]) == ["high", "high", "low", "low", "low", "high"]
    np.testing.assert_allclose(t.value, [11, 11, -11, -11, -11, 11], atol=1e-9)
    frame = t.to_frame()
    assert list(frame.columns) == ["input", "output", "direction", "U1"]


def test_dc_sweep_with_random_parameters_matches_trip_points():
    # Sweep and trip-point analysis agree within 1 uV on 100 drawn circuits: stepping the
    # source to 1 uV either side of each computed threshold, the sweep switches exactly
    # between the two steps.
    d = schmitt_inverting(0.5)
    d.vary("R*", "5%", distribution="uniform")
    d.vary("U1.offset", "5m", distribution="uniform")
    study = d.compile()
    rng = np.random.default_rng(5)
    names = study.parameter_names
    for _ in range(100):
        theta = study.nominal_parameters
        for name in ("RF", "RG"):
            theta[names.index(name)] *= 1 + rng.uniform(-0.05, 0.05)
        theta[names.index("U1.offset")] = rng.uniform(-5e-3, 5e-3)
        v = study.evaluate(theta)
        up, down = v["rising_threshold"], v["falling_threshold"]
        t = study.dc_transfer("VIN", "out", [-5, up - 1e-6, up + 1e-6, down + 1e-6, down - 1e-6],
                              parameters=theta)
        assert list(t.states["U1"]) == ["high", "high", "low", "low", "high"]


def saturating_amplifier(vin: float = 0.9) -> lotwise.Design:
    """Non-inverting gain of 11 with +-12 V supplies and 1 V headroom (+-11 V out)."""
    d = lotwise.Design(title="x11 with rails")
    d.voltage_source("VIN", "in", "gnd", vin)
    d.opamp("U1", "in", "fb", "out", model="finite_gain", open_loop_gain=1e6,
            supply_high=12, supply_low=-12, headroom_high=1, headroom_low=1)
    d.resistor("RF", "out", "fb", "10k")
    d.resistor("RG", "fb", "gnd", "1k")
    d.measure("gain", "gain", inputs="VIN", output="out")
    d.measure("vout", "node_voltage", output="out")
    d.spec("vout", min=0)
    return d


def test_saturated_builds_are_counted_and_withheld():
    # VIN uniform within 0.9 V +-20 %: the output (11 VIN) passes 11 V when VIN > 1 V,
    # a fraction (1.08 - 1.0) / 0.36 = 2/9 of the builds (closed form of the uniform law).
    d = saturating_amplifier()
    d.vary("VIN", "20%", distribution="uniform")
    r = d.compile().run(samples=20000, seed=8, keep_samples=True)
    lo, hi = lotwise.clopper_pearson(r.saturated, r.samples, 0.999)
    assert lo < 2 / 9 < hi
    assert r.passed == r.samples - r.saturated
    stats = r.measurements
    assert stats["gain"].saturated == stats["vout"].saturated == r.saturated
    assert stats["vout"].count == r.samples - r.saturated
    assert r.specs[0].saturated == r.saturated
    withheld = np.isnan(r.samples_of("vout"))
    assert withheld.sum() == r.saturated
    assert not r.passes[withheld].any()


def test_saturation_at_nominal_is_an_error_naming_the_opamp():
    with pytest.raises(lotwise.CircuitError, match="op-amp 'U1' is saturated"):
        saturating_amplifier(vin=1.5).compile()


def test_evaluate_withholds_saturated_measurements_and_names_the_opamp():
    study = saturating_amplifier().compile()
    with pytest.warns(lotwise.SaturationWarning, match="op-amp 'U1' saturated"):
        v = study.evaluate({"VIN": 1.05})
    assert math.isnan(v["gain"]) and math.isnan(v["vout"])
    e = study.evaluate_build({"VIN": 1.05})
    assert e.saturated and e.saturated_opamps == ["U1"]
    assert e.withheld == ["gain", "vout"]
    assert math.isnan(study.evaluate({"VIN": 1.05}, on_saturation="ignore")["vout"])
    with pytest.raises(lotwise.CircuitError, match="'U1'.*'gain', 'vout'"):
        study.evaluate({"VIN": 1.05}, on_saturation="raise")
    ok = study.evaluate_build({"VIN": 0.5})
    assert ok.status == "ok" and ok.saturated_opamps == [] and ok.message == ""
    assert ok.values["vout"] == pytest.approx(5.5 / (1 + 11 / 1e6), rel=1e-12)
    with pytest.raises(ValueError, match="on_saturation"):
        study.evaluate({"VIN": 0.5}, on_saturation="nan")


def test_output_limits_follow_supplies_and_headroom():
    study = saturating_amplifier().compile()
    assert study.output_limits() == {"U1": (-11.0, 11.0)}
    assert study.output_limits({"U1.supply_high": 15.0}) == {"U1": (-11.0, 14.0)}
    assert "U1.headroom_high" in study.parameter_names


def test_opamp_limit_arguments_are_checked():
    d = lotwise.Design()
    with pytest.raises(lotwise.DesignError, match="supply_high .* or output_high, not both"):
        d.opamp("U1", "a", "b", "c", supply_high=5, output_high=4)
    with pytest.raises(lotwise.DesignError, match="headroom or headroom_high"):
        d.opamp("U1", "a", "b", "c", headroom=1, headroom_high=1)


def test_invalid_value_of_a_trip_design_names_the_parameter():
    study = schmitt_inverting().compile()
    with pytest.raises(lotwise.DesignError, match="parameter 'RG': value -1"):
        study.evaluate({"RG": -1.0})
    with pytest.raises(lotwise.DesignError,
                       match="op-amp 'U1': its high output limit -21 V is not above its low "
                             "output limit -11 V"):
        study.evaluate({"U1.supply_high": -20.0})


def rc_follower() -> lotwise.Design:
    d = lotwise.Design(title="RC low-pass and follower")
    d.voltage_source("VIN", "in", "gnd", 0.0)
    d.resistor("R1", "in", "a", "10k")
    d.capacitor("C1", "a", "gnd", "10n")
    d.opamp("U1", "a", "out", "out")
    return d


def test_first_order_low_pass_bandwidth_phase_and_gain_error():
    # f_c = 1 / (2 pi R C); at f_c the gain is 1/sqrt(2) and the phase -45 degrees.
    # Source: common practice (first-order RC low-pass).
    fc = 1 / (2 * math.pi * 10e3 * 10e-9)
    d = rc_follower()
    d.measure("bw", "bandwidth", inputs="VIN", output="out")
    d.measure("phase", "phase", inputs="VIN", output="out", frequency=fc)
    d.measure("error", "gain_error", inputs="VIN", output="out", frequency=fc, target=1.0)
    d.measure("dc_error", "gain_error", inputs="VIN", output="out", target=0.5)
    v = d.compile().nominal_values
    assert v["bw"] == pytest.approx(fc, rel=1e-9)
    assert v["phase"] == pytest.approx(-45.0, abs=1e-9)
    assert v["error"] == pytest.approx(1 / math.sqrt(2) - 1, abs=1e-12)
    assert v["dc_error"] == pytest.approx(1.0, abs=1e-12)  # gain 1 against a target of 0.5


def test_follower_bandwidth_is_the_gain_bandwidth_product():
    # A unity follower of a single-pole op-amp closes at GBW (to within 1/A0).
    # Source: common practice (single-pole op-amp model).
    d = lotwise.Design()
    d.voltage_source("VIN", "in", "gnd", 0.0)
    d.opamp("U1", "in", "out", "out", model="single_pole", open_loop_gain=1e5,
            gain_bandwidth="1M")
    d.resistor("RL", "out", "gnd", "10k")
    d.measure("bw", "bandwidth", inputs="VIN", output="out")
    bw = d.compile().nominal_values["bw"]
    assert bw == pytest.approx(1e6 * (1 + 1e-5), rel=1e-4)


def test_measurement_keywords_reach_the_design():
    d = schmitt_inverting()
    m = {x["name"]: x for x in d.measurements}
    assert m["hysteresis"]["opamp"] == "U1" and m["hysteresis"]["kind"] == "hysteresis"
    d.measure("bad", "rising_threshold", inputs="VIN")
    with pytest.raises(lotwise.DesignError, match="bad"):
        d.compile()
    with pytest.raises(lotwise.DesignError, match="unknown measurement kind 'threshold'"):
        lotwise.Design().measure("x", "threshold", inputs="V")
