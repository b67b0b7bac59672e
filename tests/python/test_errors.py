"""Bad input raises the matching lotwise exception, with the C++ library's message.

The expected texts are the messages lotwise's C++ code composes (lib/src: the design
file reader, units, circuit, topology and run checks); the Python layer must pass them
through unchanged, so the three faces of lotwise say the same thing.
"""

from __future__ import annotations

import numpy as np
import pytest

import lotwise
from conftest import DIFFERENCE_AMPLIFIER_TOML, build_difference_amplifier

MALFORMED = "(write e.g. 4990, 4.99k, 4k99, 100n, 2.2u, 1e-3)"


def edited(old: str, new: str) -> str:
    assert old in DIFFERENCE_AMPLIFIER_TOML
    return DIFFERENCE_AMPLIFIER_TOML.replace(old, new)


FLOATING_PART = 'C9 = { type = "capacitor", value = "1n", nodes = ["out", "probe"] }\n'

FILE_CASES = [
    pytest.param(
        edited("samples = 4000", "sample = 4000"), lotwise.DesignError,
        "<design>:50:10: unknown key 'sample' in [run] (allowed: samples, seed, threads, sampler, replicates, confidence, target_half_width, tolerance_digits, builds_per_lot)",
        id="unknown-key"),
    pytest.param(
        edited('value = "100k", nodes = ["n", "out"]', 'value = "100q", nodes = ["n", "out"]'),
        lotwise.DesignError,
        f"<design>:8:35: part 'R2': value: malformed number '100q': unknown suffix {MALFORMED}",
        id="malformed-number"),
    pytest.param(
        edited("gain = { min = 9.9", "gian = { min = 9.9"), lotwise.DesignError,
        "<design>:45:8: spec on 'gian': no measurement has that name "
        "(measurements: gain, cmrr, offset, vout)",
        id="spec-on-missing-measurement"),
    pytest.param(
        edited("[[vary]]\nparameters = [\"R*\"]", "[[vary]]\nparameters = [\"Q*\"]"),
        lotwise.DesignError,
        "<design>:12:1: [[vary]] number 1: target 'Q*' matches no parameter (parameters: VP, VN, "
        "U1.open_loop_gain, U1.gain_bandwidth, U1.offset, U1.bias_plus, U1.bias_minus, R1, R2, "
        "R3, R4)",
        id="variation-matches-nothing"),
]


@pytest.mark.parametrize(("text", "error", "message"), FILE_CASES)
def test_design_file_errors(text, error, message):
    with pytest.raises(error) as caught:
        lotwise.parse(text)
    assert type(caught.value) is error
    assert str(caught.value) == message


def test_floating_node_in_a_file_is_a_circuit_error():
    text = edited('R4 = { type = "resistor", value = "100k", nodes = ["p", "gnd"] }\n',
                  'R4 = { type = "resistor", value = "100k", nodes = ["p", "gnd"] }\n' + FLOATING_PART)
    with pytest.raises(lotwise.CircuitError) as caught:
        lotwise.parse(text, "amp.toml")
    assert str(caught.value) == (
        "node 'probe' has no DC path to ground ('gnd'); it connects only to: C9 (capacitor). "
        "Add a resistor or a source that sets its DC voltage")


def test_floating_node_in_code_is_a_circuit_error():
    d = lotwise.Design()
    d.voltage_source("V1", "in", "gnd", 1.0)
    d.resistor("R1", "in", "out", "1k")
    d.resistor("R2", "a", "b", "1k")  # an island: neither a nor b reaches ground
    d.measure("v", "node_voltage", output="out")
    with pytest.raises(lotwise.CircuitError) as caught:
        d.compile()
    assert str(caught.value) == (
        "node 'a' has no DC path to ground ('gnd'); it connects only to: R2 (resistor). "
        "Add a resistor or a source that sets its DC voltage")


def test_loop_of_voltage_sources_is_a_circuit_error():
    d = lotwise.Design()
    d.voltage_source("V1", "a", "gnd", 1.0)
    d.voltage_source("V2", "a", "gnd", 2.0)
    with pytest.raises(lotwise.CircuitError, match=r"^these elements form a loop of voltage sources .*: V1, V2;"):
        d.compile()


def test_missing_file_is_a_design_error(tmp_path):
    path = tmp_path / "absent.toml"
    with pytest.raises(lotwise.DesignError) as caught:
        lotwise.load(path)
    assert str(caught.value) == f"{path}: cannot open the design file"


def test_invalid_toml_names_the_position():
    with pytest.raises(lotwise.DesignError, match=r"^amp\.toml:2:7: not valid TOML: "):
        lotwise.parse("title = 'x'\n[parts\n", "amp.toml")


BUILDER_CASES = [
    pytest.param(lambda d: d.resistor("R9", "a", "b", "4.7q"),
                 f"part 'R9': value: malformed number '4.7q': unknown suffix {MALFORMED}",
                 id="malformed-number"),
    pytest.param(lambda d: d.resistor("R9", "a", "b", -1),
                 "parameter 'R9': value must be greater than zero (got -1 ohm)",
                 id="negative-resistance"),
    pytest.param(lambda d: d.resistor("R1", "a", "b", 1),
                 "element name 'R1' is used twice", id="duplicate-name"),
    pytest.param(lambda d: d.resistor("R9", "a", "a", 1),
                 "element 'R9' (resistor) connects node 'a' to itself", id="self-loop"),
    pytest.param(lambda d: d.opamp("U9", "a", "b", "c", model="perfect"),
                 "unknown op-amp model 'perfect' (ideal, finite_gain, single_pole)",
                 id="unknown-opamp-model"),
    pytest.param(lambda d: d.opamp("U9", "a", "b", "gnd"),
                 "op-amp 'U9': its output is tied to ground ('gnd')", id="opamp-output-to-ground"),
    pytest.param(lambda d: d.measure("m", "gainz", inputs="VP", output="out"),
                 "unknown measurement kind 'gainz' (gain, differential_gain, common_mode_gain, "
                 "cmrr, output_offset, input_offset, node_voltage, bandwidth, phase, gain_error, "
                 "rising_threshold, falling_threshold, hysteresis, threshold_centre, output_high, "
                 "output_low)",
                 id="unknown-measurement-kind"),
    pytest.param(lambda d: d.vary("R*", "1%", distribution="gaussian"),
                 "unknown distribution 'gaussian' (normal, uniform, truncated_normal, triangular, "
                 "log_normal, binned, fixed)", id="unknown-distribution"),
    pytest.param(lambda d: d.vary("R*", "1 percent"),
                 "variation of 'R*': tolerance: malformed number '1 percent': unknown suffix "
                 + MALFORMED, id="malformed-tolerance"),
    pytest.param(lambda d: d.set_nominal("R7", 1.0), "no parameter called 'R7'",
                 id="unknown-parameter"),
]


@pytest.mark.parametrize(("call", "message"), BUILDER_CASES)
def test_builder_errors_are_design_errors(call, message):
    d = build_difference_amplifier()
    with pytest.raises(lotwise.DesignError) as caught:
        call(d)
    assert str(caught.value) == message


COMPILE_CASES = [
    pytest.param(lambda d: d.spec("gian", min=1),
                 "spec on 'gian': no measurement has that name (measurements: gain, cmrr, "
                 "offset, vout)", id="spec-on-missing-measurement"),
    pytest.param(lambda d: d.spec("gain"),
                 "spec on 'gain' has neither a min nor a max limit", id="spec-without-limits"),
    pytest.param(lambda d: d.measure("g2", "gain", inputs=("VP", "VN"), output="out"),
                 "measurement 'g2' (gain) needs 1 input source(s), got 2", id="wrong-input-count"),
    pytest.param(lambda d: d.measure("g2", "gain", inputs="R1", output="out"),
                 "measurement 'g2': input 'R1' is a resistor, not an independent voltage or "
                 "current source", id="input-not-a-source"),
    pytest.param(lambda d: d.measure("g2", "gain", inputs="VP", output="nowhere"),
                 "measurement 'g2': output node 'nowhere' is not in the circuit",
                 id="unknown-output-node"),
    pytest.param(lambda d: d.vary("Q*", 0.01),
                 "variation 4: target 'Q*' matches no parameter (parameters: VP, VN, "
                 "U1.open_loop_gain, U1.gain_bandwidth, U1.offset, U1.bias_plus, U1.bias_minus, "
                 "R1, R2, R3, R4)", id="variation-matches-nothing"),
    pytest.param(lambda d: d.vary("R1", 0.05),
                 "parameter 'R1' is spread by both variation 1 and variation 4; give each "
                 "parameter one variation", id="parameter-varied-twice"),
]


@pytest.mark.parametrize(("change", "message"), COMPILE_CASES)
def test_compile_errors_are_design_errors(change, message):
    d = build_difference_amplifier()
    change(d)
    with pytest.raises(lotwise.DesignError) as caught:
        d.compile()
    assert str(caught.value) == message


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"samples": 0}, "samples must be a whole number >= 1 (got 0)"),
        ({"confidence": 1.5}, "the confidence level must lie strictly between 0 and 1"),
        ({"chunk_size": 0}, "chunk_size must be a whole number >= 1 (got 0)"),
        ({"seed": -1}, "seed must be a whole number >= 0 (got -1)"),
    ],
    ids=["zero-samples", "confidence-above-1", "zero-chunk", "negative-seed"],
)
def test_bad_run_options_are_run_errors(difference_amplifier, options, message):
    with pytest.raises(lotwise.RunError) as caught:
        difference_amplifier.run(**options)
    assert str(caught.value) == message


def test_zero_samples_reaches_the_core_check(difference_amplifier):
    # The core's own check, reached when the Python layer lets the value through.
    with pytest.raises(lotwise.RunError) as caught:
        difference_amplifier._core.run(samples=0)
    assert str(caught.value) == "the number of samples must be at least 1"


def test_wrong_types_are_type_errors(difference_amplifier):
    d = lotwise.Design()
    with pytest.raises(TypeError, match="expected a number or text"):
        d.resistor("R1", "a", "b", None)
    with pytest.raises(TypeError, match="expected a number or text"):
        d.resistor("R1", "a", "b", True)
    with pytest.raises(TypeError, match="samples must be a whole number"):
        difference_amplifier.run(samples=10.5)


def test_evaluate_errors(difference_amplifier):
    n = len(difference_amplifier.parameter_names)
    with pytest.raises(lotwise.Error) as caught:
        difference_amplifier.evaluate([1.0, 2.0])
    assert str(caught.value) == f"expected {n} parameter values, got 2"
    with pytest.raises(lotwise.Error, match="one-dimensional"):
        difference_amplifier.evaluate(np.ones((2, n)))
    with pytest.raises(lotwise.DesignError, match=r"^no parameter called 'R9' \(parameters: VP, VN,"):
        difference_amplifier.evaluate({"R9": 1.0})
    with pytest.raises(lotwise.DesignError) as caught:
        difference_amplifier.evaluate({"R2": -5.0})
    assert str(caught.value) == ("parameter 'R2': value -5 is outside its physical range "
                                 "(must be finite and > 0)")


def test_singular_evaluation_names_the_unknowns():
    # A VCCS controlled by its own node voltage acts as a conductance in parallel with R1.
    d = lotwise.Design()
    d.current_source("I1", "gnd", "a", 1e-3)
    d.vccs("G1", "a", "gnd", "a", "gnd", 1e-3)
    d.resistor("R1", "a", "gnd", "1k")
    d.measure("va", "node_voltage", output="a")
    study = d.compile()
    assert study.nominal_values["va"] == pytest.approx(0.5, rel=1e-12)  # 1 mA into 2 mS
    # A transconductance of -1 mS cancels R1's 1 mS: node a has no defined voltage.
    with pytest.raises(lotwise.CircuitError, match=r"^the circuit equations are singular: nothing fixes node 'a'"):
        study.evaluate({"G1": -1e-3})


def test_result_without_samples_says_how_to_get_them(difference_amplifier):
    result = difference_amplifier.run(samples=10)
    for call in (lambda: result.values, lambda: result.passes, lambda: result.samples_of("gain")):
        with pytest.raises(lotwise.Error) as caught:
            call()
        assert str(caught.value).endswith("needs the per-build values: run with keep_samples=True")
    kept = difference_amplifier.run(samples=10, keep_samples=True)
    with pytest.raises(lotwise.Error) as caught:
        kept.samples_of("gian")
    assert str(caught.value) == "no measurement called 'gian' (measurements: gain, cmrr, offset, vout)"


def test_exception_hierarchy():
    for cls in (lotwise.DesignError, lotwise.CircuitError, lotwise.RunError):
        assert issubclass(cls, lotwise.Error)
        assert cls.__module__ == "lotwise"
    assert issubclass(lotwise.Error, Exception)
    # Bad input is also a ValueError for callers that catch generically.
    assert issubclass(lotwise.DesignError, ValueError)
    assert issubclass(lotwise.RunError, ValueError)
    assert not issubclass(lotwise.CircuitError, lotwise.DesignError)
