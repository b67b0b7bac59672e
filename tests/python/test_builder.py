"""Designs built in code: the same answers as the design file, and the textbook ones."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

import lotwise
from conftest import DIFFERENCE_AMPLIFIER_TOML, ROOT, build_difference_amplifier


@pytest.fixture(params=[1, 2], ids=["1-thread", "2-threads"])
def threads(request: pytest.FixtureRequest) -> int:
    return request.param


def test_code_and_file_describe_the_same_study(difference_amplifier):
    built = build_difference_amplifier().compile()
    assert built.title == difference_amplifier.title
    assert built.parameter_names == difference_amplifier.parameter_names
    assert built.varied_parameters == difference_amplifier.varied_parameters
    assert built.measurement_names == difference_amplifier.measurement_names
    np.testing.assert_array_equal(built.nominal_parameters, difference_amplifier.nominal_parameters)
    assert built.nominal_values == difference_amplifier.nominal_values


def test_code_and_file_give_identical_results(difference_amplifier, threads):
    from_file = difference_amplifier.run(seed=5, threads=threads, keep_samples=True)
    from_code = build_difference_amplifier().compile().run(seed=5, threads=threads, keep_samples=True)
    assert from_code.passed == from_file.passed
    assert 0 < from_file.passed < from_file.samples  # a yield that can tell them apart
    np.testing.assert_array_equal(from_code.values, from_file.values)
    np.testing.assert_array_equal(from_code.passes, from_file.passes)
    assert from_code.to_json() == from_file.to_json()


def test_answer_does_not_depend_on_thread_count(difference_amplifier):
    one = difference_amplifier.run(threads=1, keep_samples=True, chunk_size=256)
    two = difference_amplifier.run(threads=2, keep_samples=True, chunk_size=256)
    np.testing.assert_array_equal(one.values, two.values)
    assert one.to_json() == two.to_json()


def test_seed_changes_the_draws(difference_amplifier):
    a = difference_amplifier.run(samples=500, seed=1, keep_samples=True)
    b = difference_amplifier.run(samples=500, seed=2, keep_samples=True)
    assert not np.array_equal(a.samples_of("gain"), b.samples_of("gain"))


def test_run_defaults_come_from_the_design(difference_amplifier):
    result = difference_amplifier.run()
    assert (result.samples, result.seed) == (4000, 11)  # the text's [run] table
    assert result.confidence == 0.95


def test_difference_amplifier_matches_the_textbook(difference_amplifier):
    # Difference amplifier with an ideal op-amp (source: Sedra & Smith, Microelectronic
    # Circuits, ch. 2; Pallas-Areny & Webster, IEEE TIM 40(4), 1991):
    #   A_d = 1/2 [R2/R1 + R4/(R3+R4) (1 + R2/R1)],  A_cm = (R1 R4 - R2 R3) / (R1 (R3 + R4)).
    # The design's op-amp has a finite open-loop gain; a very large one stands in for
    # the ideal model, leaving an error of order (1 + R2/R1) / A0.
    r1, r2, r3, r4 = 10.1e3, 99.0e3, 9.95e3, 100.7e3
    a0 = 1e12
    values = difference_amplifier.evaluate({"R1": r1, "R2": r2, "R3": r3, "R4": r4,
                                            "U1.open_loop_gain": a0})
    a_d = 0.5 * (r2 / r1 + r4 / (r3 + r4) * (1 + r2 / r1))
    a_cm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    assert values["gain"] == pytest.approx(a_d, rel=1e-9)
    assert values["cmrr"] == pytest.approx(20 * np.log10(abs(a_d / a_cm)), rel=1e-8)


def test_finite_open_loop_gain_matches_the_feedback_formula():
    # Inverting amplifier with finite gain A: G = -(R2/R1) / (1 + (1 + R2/R1)/A)
    # (source: Sedra & Smith, Microelectronic Circuits, ch. 2). Ideal gain -100 with
    # A = 1e5: -99.8999...
    d = lotwise.Design("inverting amplifier")
    d.voltage_source("VIN", "in", "gnd", 0.01)
    d.opamp("U1", "gnd", "n", "out", model="finite_gain", open_loop_gain=1e5)
    d.resistor("R1", "in", "n", "1k")
    d.resistor("R2", "n", "out", "100k")
    d.measure("gain", "gain", inputs="VIN", output="out")
    expected = -100.0 / (1 + 101.0 / 1e5)
    assert d.compile().nominal_values["gain"] == pytest.approx(expected, rel=1e-12)


def test_single_pole_bandwidth_is_the_noise_gain_rule():
    # Non-inverting gain +10 with a single-pole op-amp: f_3dB = f_b (1 + A0 beta),
    # f_b = GBW / A0 (source: Sedra & Smith, ch. 2; Franco, Design with Operational
    # Amplifiers, ch. 6): GBW 1 MHz, A0 1e5, beta 0.1 -> 100.009 kHz.
    d = lotwise.Design()
    d.voltage_source("VIN", "in", "gnd", 0.0)
    d.opamp("U1", "in", "fb", "out", model="single_pole", open_loop_gain=1e5, gain_bandwidth="1M")
    d.resistor("RF", "out", "fb", "9k")
    d.resistor("RG", "fb", "gnd", "1k")
    d.measure("bw", "bandwidth", inputs="VIN", output="out")
    expected = 1e6 / 1e5 * (1 + 1e5 * 0.1)
    assert d.compile().nominal_values["bw"] == pytest.approx(expected, rel=1e-6)


def test_every_part_kind_can_be_built():
    d = lotwise.Design(title="all parts", ground="0")
    d.voltage_source("V1", "a", "0", "1")
    d.current_source("I1", "0", "b", "1m")
    d.resistor("R1", "a", "b", "1k")
    d.resistor("R2", "b", "0", "2k")
    d.capacitor("C1", "b", "0", "100n")
    d.inductor("L1", "b", "c", "10u")
    d.resistor("R3", "c", "0", "1k")
    d.vcvs("E1", "d", "0", "b", "0", 2.0)
    d.resistor("R4", "d", "0", "1k")
    d.vccs("G1", "0", "e", "b", "0", "1m")
    d.resistor("R5", "e", "0", "1k")
    d.ccvs("H1", "f", "0", "V1", "100")
    d.resistor("R6", "f", "0", "1k")
    d.cccs("F1", "0", "g", "V1", 3.0)
    d.resistor("R7", "g", "0", "1k")
    d.opamp("U1", "b", "h", "h")
    assert d.element_names == ["V1", "I1", "R1", "R2", "C1", "L1", "R3", "E1", "R4", "G1",
                               "R5", "H1", "R6", "F1", "R7", "U1"]
    assert d.nodes == ["a", "b", "c", "d", "e", "f", "g", "h"]
    assert d.ground == "0"
    assert "U1.bias_minus" in d.parameter_names
    v = d.compile().operating_point()
    # By hand: node b from KCL, 1 mA in through I1, (1 - vb)/1k in through R1, vb/2k
    # and vb/1k (R2, and L1 shorts b to c at DC, R3) out:
    # 1e-3 + (1 - vb)/1e3 = vb/2e3 + vb/1e3  ->  vb = 0.8 V.
    vb = 0.8
    i_v1 = -(1 - vb) / 1e3  # current through V1 from plus (a) to minus: a supplies R1
    expected = {"a": 1.0, "b": vb, "c": vb, "d": 2 * vb, "e": 1e-3 * vb * 1e3,
                "f": 100 * i_v1, "g": 3 * i_v1 * 1e3, "h": vb}
    assert v == pytest.approx(expected, rel=1e-12, abs=1e-15)


def test_design_file_can_be_edited_before_compiling():
    d = lotwise.Design.from_text(DIFFERENCE_AMPLIFIER_TOML)
    d.set_nominal("R4", "99k")
    d.set_nominal("U1.open_loop_gain", 1e12)
    values = d.compile().nominal_values
    a_cm = (10e3 * 99e3 - 100e3 * 10e3) / (10e3 * (10e3 + 99e3))
    a_d = 0.5 * (10 + 99 / 109 * 11)
    assert values["cmrr"] == pytest.approx(20 * np.log10(abs(a_d / a_cm)), rel=1e-8)


def test_study_keeps_its_own_copy_of_the_design():
    d = build_difference_amplifier()
    study = d.compile()
    d.set_nominal("R2", "200k")
    assert study.nominal_parameters[study.parameter_names.index("R2")] == 100e3
    copy = study.design
    copy.title = "changed"
    assert study.title == "Difference amplifier, gain 10"
    assert copy.compile().title == "changed"


def test_vary_states_tolerances_relative_or_absolute():
    d = build_difference_amplifier()
    v = d._core.variations
    assert {k: v[0][k] for k in ("parameters", "tolerance", "relative", "distribution",
                                 "sigmas")} == {"parameters": ["R*"], "tolerance": 0.01,
                                                "relative": True, "distribution": "normal",
                                                "sigmas": 3.0}
    assert v[0]["lot_tolerance"] == 0.0 and v[0]["ratio_tolerance"] == 0.0
    assert v[1]["tolerance"] == pytest.approx(1e-3) and v[1]["relative"] is False
    assert v[2]["relative"] is True and v[2]["distribution"] == "uniform"
    d.vary("U1.bias_plus", 2e-9, relative=False, sigmas=2)
    assert d._core.variations[3]["relative"] is False and d._core.variations[3]["sigmas"] == 2.0
    with pytest.raises(TypeError, match="relative= applies to a numeric tolerance"):
        d.vary("U1.bias_minus", "1n", relative=False)
    with pytest.raises(lotwise.DesignError, match="sigmas applies to the normal-shaped distributions only"):
        d.vary("U1.bias_minus", "1n", distribution="uniform", sigmas=3)


def test_readme_example_runs():
    # The package README's example, executed as written.
    readme = (ROOT / "bindings" / "python" / "README.md").read_text(encoding="utf-8")
    code = re.search(r"```python\n(.*?)```", readme, re.S)
    assert code is not None
    namespace: dict = {}
    exec(compile(code.group(1).replace("print(", "str("), "README.md", "exec"), namespace)
    result = namespace["result"]
    assert result.samples == 20000
    assert namespace["gain"].shape == (20000,)
    # R2/R1 = R4/R3 = 10: a balanced difference amplifier with gain 10 (source: Sedra &
    # Smith, ch. 2), lowered by the finite open-loop gain 1e5 by about 11/1e5.
    assert result.measurements["gain"].nominal == pytest.approx(10.0, rel=2e-4)


def test_design_file_path_may_be_a_path_object():
    study = lotwise.load(Path(ROOT / "docs" / "examples" / "load_cell_amp_1pct.toml"))
    assert study.title.startswith("Load-cell bridge amplifier")
