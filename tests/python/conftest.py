"""Shared fixtures for lotwise's Python tests."""

from __future__ import annotations

import signal
from pathlib import Path
from typing import Dict, Tuple

import pytest

import lotwise


@pytest.fixture(autouse=True, scope="session")
def _ctrl_c_reaches_python():
    # A shell that starts the suite in the background (`cmd &`, nohup) leaves SIGINT
    # ignored, and Python then installs no handler: _thread.interrupt_main and
    # signal.raise_signal(SIGINT) do nothing and the interrupt tests would run their endless
    # studies forever. Give SIGINT Python's own handler for the session.
    previous = signal.getsignal(signal.SIGINT)
    if previous is signal.SIG_IGN:
        signal.signal(signal.SIGINT, signal.default_int_handler)
    yield
    if previous is signal.SIG_IGN:
        signal.signal(signal.SIGINT, previous)

ROOT = Path(__file__).resolve().parents[2]
EXAMPLES = ROOT / "docs" / "examples"

# The two shipped load-cell amplifier designs differ only in resistor tolerance.
EXAMPLE_FILES = {
    "1pct": EXAMPLES / "load_cell_amp_1pct.toml",
    "0.1pct": EXAMPLES / "load_cell_amp_01pct.toml",
}

# A difference amplifier (R1 inverting input, R2 feedback, R3 non-inverting input, R4 to
# ground), written once as a design file and once (build_difference_amplifier) in code.
DIFFERENCE_AMPLIFIER_TOML = """\
title = "Difference amplifier, gain 10"

[parts]
VP = { type = "voltage_source", value = 0.05, nodes = ["in_p", "gnd"] }
VN = { type = "voltage_source", value = -0.05, nodes = ["in_n", "gnd"] }
U1 = { type = "opamp", model = "finite_gain", open_loop_gain = 2e5, offset = 0, bias_current = "10n", plus = "p", minus = "n", output = "out" }
R1 = { type = "resistor", value = "10k", nodes = ["in_n", "n"] }
R2 = { type = "resistor", value = "100k", nodes = ["n", "out"] }
R3 = { type = "resistor", value = "10k", nodes = ["in_p", "p"] }
R4 = { type = "resistor", value = "100k", nodes = ["p", "gnd"] }

[[vary]]
parameters = ["R*"]
tolerance = "1%"

[[vary]]
parameters = "U1.offset"
tolerance = "1m"

[[vary]]
parameters = ["U1.open_loop_gain"]
tolerance = "50%"
distribution = "uniform"

[measurements.gain]
kind = "differential_gain"
inputs = ["VP", "VN"]
output = "out"

[measurements.cmrr]
kind = "cmrr"
inputs = ["VP", "VN"]
output = "out"

[measurements.offset]
kind = "output_offset"
inputs = ["VP", "VN"]
output = "out"

[measurements.vout]
kind = "node_voltage"
output = "out"

[specs]
gain = { min = 9.9, max = 10.1 }
cmrr = { min = 46 }
offset = { min = -0.01, max = 0.01 }

[run]
samples = 4000
seed = 11
"""


def build_difference_amplifier() -> lotwise.Design:
    """The design of DIFFERENCE_AMPLIFIER_TOML, built through the Python API."""
    d = lotwise.Design(title="Difference amplifier, gain 10")
    d.voltage_source("VP", "in_p", "gnd", 0.05)
    d.voltage_source("VN", "in_n", "gnd", "-50m")
    d.opamp("U1", "p", "n", "out", model="finite_gain", open_loop_gain=2e5, offset=0,
            bias_current="10n")
    d.resistor("R1", "in_n", "n", "10k")
    d.resistor("R2", "n", "out", 100e3)
    d.resistor("R3", "in_p", "p", "10k")
    d.resistor("R4", "p", "gnd", "100k")
    d.vary(["R*"], "1%")
    d.vary("U1.offset", "1m")
    d.vary("U1.open_loop_gain", 0.5, distribution="uniform")
    d.measure("gain", "differential_gain", inputs=("VP", "VN"), output="out")
    d.measure("cmrr", "cmrr", inputs=["VP", "VN"], output="out")
    d.measure("offset", "output_offset", inputs=("VP", "VN"), output="out")
    d.measure("vout", "node_voltage", output="out")
    d.spec("gain", min=9.9, max=10.1)
    d.spec("cmrr", min=46)
    d.spec("offset", min="-10m", max=0.01)
    d.samples = 4000
    d.seed = 11
    return d


@pytest.fixture(params=sorted(EXAMPLE_FILES), ids=sorted(EXAMPLE_FILES))
def example_name(request: pytest.FixtureRequest) -> str:
    return request.param


@pytest.fixture(scope="session")
def example_runs() -> Dict[str, Tuple[lotwise.Study, lotwise.Result]]:
    """Each shipped example run once with its own [run] settings, samples kept."""
    runs = {}
    for name, path in EXAMPLE_FILES.items():
        study = lotwise.load(path)
        runs[name] = (study, study.run(keep_samples=True))
    return runs


@pytest.fixture(scope="session")
def difference_amplifier() -> lotwise.Study:
    return lotwise.parse(DIFFERENCE_AMPLIFIER_TOML, "difference_amplifier.toml")


@pytest.fixture(scope="session")
def difference_amplifier_run(difference_amplifier: lotwise.Study) -> lotwise.Result:
    return difference_amplifier.run(keep_samples=True)
