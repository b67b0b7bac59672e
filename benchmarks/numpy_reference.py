"""Reference (b): the instrumentation amplifier of studies/instrumentation_amp.toml as a
notebook user would write it in numpy: the same modified-nodal-analysis matrices, built
for a batch of draws at once, solved with one batched numpy.linalg.solve for the three
right-hand sides (differential drive, common-mode drive, operating point).

    python benchmarks/numpy_reference.py [samples]

Prints one JSON line with samples_per_s and the means (checked by run_all.py against
lotwise's). The draws use numpy's generator with the same laws, not the same stream.
"""

from __future__ import annotations

import json
import sys
import time

import numpy as np

# Unknowns: node voltages, then the branch currents of the three sources and three op-amps.
NODES = ["in_p", "in_n", "ref", "g_p", "g_n", "a_p", "a_n", "d_p", "d_n", "out"]
BRANCHES = ["VP", "VN", "VREF", "U1", "U2", "U3"]
IDX = {name: i for i, name in enumerate(NODES + BRANCHES)}
N = len(IDX)

RESISTORS = {  # name: (node a, node b, nominal ohms)
    "RF1": ("a_p", "g_p", 24.9e3),
    "RF2": ("a_n", "g_n", 24.9e3),
    "RG": ("g_p", "g_n", 498.0),
    "R1": ("a_n", "d_n", 10e3),
    "R2": ("d_n", "out", 10e3),
    "R3": ("a_p", "d_p", 10e3),
    "R4": ("d_p", "ref", 10e3),
}
OPAMPS = {"U1": ("in_p", "g_p", "a_p"), "U2": ("in_n", "g_n", "a_n"), "U3": ("d_p", "d_n", "out")}
SOURCES = {"VP": "in_p", "VN": "in_n", "VREF": "ref"}


def draw(rng: np.random.Generator, batch: int) -> dict:
    """Resistors 0.1 % at 3 sigma (normal), offsets 300 uV at 3 sigma, gains 2e5 +- 50 %."""
    p = {}
    for name, (_, _, r) in RESISTORS.items():
        p[name] = r * (1.0 + (0.001 / 3.0) * rng.standard_normal(batch))
    for u in OPAMPS:
        p[u + ".offset"] = (300e-6 / 3.0) * rng.standard_normal(batch)
        p[u + ".gain"] = 2e5 * (1.0 + 0.5 * (2.0 * rng.random(batch) - 1.0))
    return p


def matrices(p: dict, batch: int) -> np.ndarray:
    a = np.zeros((batch, N, N))
    for name, (n1, n2, _) in RESISTORS.items():
        g = 1.0 / p[name]
        i, j = IDX[n1], IDX[n2]
        a[:, i, i] += g
        a[:, j, j] += g
        a[:, i, j] -= g
        a[:, j, i] -= g
    for name, node in SOURCES.items():
        k, i = IDX[name], IDX[node]
        a[:, i, k] += 1.0
        a[:, k, i] += 1.0
    for name, (plus, minus, out) in OPAMPS.items():
        # Row k: V(+) - V(-) - V(out)/A = -Vos; the output current enters node out.
        k = IDX[name]
        a[:, IDX[out], k] -= 1.0
        a[:, k, IDX[plus]] += 1.0
        a[:, k, IDX[minus]] -= 1.0
        a[:, k, IDX[out]] -= 1.0 / p[name + ".gain"]
    return a


def right_hand_sides(p: dict, batch: int) -> np.ndarray:
    b = np.zeros((batch, N, 3))
    b[:, IDX["VP"], 0], b[:, IDX["VN"], 0] = 0.5, -0.5  # differential drive
    b[:, IDX["VP"], 1], b[:, IDX["VN"], 1] = 1.0, 1.0  # common-mode drive
    for s in SOURCES:  # operating point with the offsets
        b[:, IDX[s], 2] = 2.5
    for u in OPAMPS:
        b[:, IDX[u], 2] = -p[u + ".offset"]
    return b


def run(samples: int, seed: int = 7, batch: int = 8192) -> dict:
    rng = np.random.default_rng(seed)
    done, passed = 0, 0
    sums = np.zeros(3)
    start = time.perf_counter()
    cpu_start = time.process_time()
    while done < samples:
        m = min(batch, samples - done)
        p = draw(rng, m)
        x = np.linalg.solve(matrices(p, m), right_hand_sides(p, m))
        out = x[:, IDX["out"], :] - x[:, IDX["ref"], :]
        gain, common, offset = out[:, 0], out[:, 1], out[:, 2]
        cmrr = 20.0 * np.log10(np.abs(gain) / np.abs(common))
        ok = (gain >= 100.5) & (gain <= 101.5) & (cmrr >= 70.0) & (np.abs(offset) <= 0.05)
        passed += int(ok.sum())
        sums += [gain.sum(), cmrr.sum(), offset.sum()]
        done += m
    seconds = time.perf_counter() - start
    cpu_seconds = time.process_time() - cpu_start
    means = sums / done
    return {
        "reference": "numpy",
        "samples": done,
        "seconds": seconds,
        "samples_per_s": done / seconds,
        "cpu_seconds": cpu_seconds,
        "samples_per_cpu_s": done / cpu_seconds,
        "gain_mean": means[0],
        "cmrr_mean": means[1],
        "offset_mean": means[2],
        "yield": passed / done,
    }


if __name__ == "__main__":
    print(json.dumps(run(int(sys.argv[1]) if len(sys.argv) > 1 else 200_000)))
