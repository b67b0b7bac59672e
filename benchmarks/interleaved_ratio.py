"""lotwise against numpy in one Python process, in short alternating bursts: the ratio a
notebook user sees, measured so that a shared host's drifting speed falls on both sides.

    python benchmarks/interleaved_ratio.py [bursts] [lotwise samples] [numpy samples]

Each burst pair runs the instrumentation amplifier through lotwise's Python module (one
thread, attribution off) and then numpy_reference.run on the same circuit, each timed in
CPU seconds of the process; a pair takes a fraction of a second, so both halves see the
host in the same state far more often than runs a minute apart do. Prints one JSON line:
the median of the per-pair ratios (the figure judged), the median rates and every pair.
lotwise is measured through Python here, which costs it a little against its C++ rate, so
the ratio errs on the low side.
"""

from __future__ import annotations

import json
import os
import statistics
import sys
import time

import lotwise

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import numpy_reference  # noqa: E402  (beside this file)


def main() -> None:
    bursts = int(sys.argv[1]) if len(sys.argv) > 1 else 15
    lw_samples = int(sys.argv[2]) if len(sys.argv) > 2 else 1 << 18
    np_samples = int(sys.argv[3]) if len(sys.argv) > 3 else 16384
    if bursts < 1 or lw_samples < 1 or np_samples < 1:
        sys.exit("interleaved_ratio.py: bursts and sample counts must be positive integers")
    study = lotwise.load(os.path.join(HERE, "studies", "instrumentation_amp.toml"))
    # One of each first, untimed: imports, first-touch allocations, the numpy kernels' setup.
    study.run(samples=1 << 14, seed=1, threads=1, attribution=False)
    numpy_reference.run(8192, seed=1)
    pairs = []
    for i in range(bursts):
        start = time.process_time()
        study.run(samples=lw_samples, seed=100 + i, threads=1, attribution=False)
        lw_rate = lw_samples / (time.process_time() - start)
        np_rate = numpy_reference.run(np_samples, seed=100 + i)["samples_per_cpu_s"]
        pairs.append({"lotwise": lw_rate, "numpy": np_rate, "ratio": lw_rate / np_rate})
    print(json.dumps({
        "reference": "interleaved",
        "bursts": bursts,
        "lotwise_samples": lw_samples,
        "numpy_samples": np_samples,
        "ratio_median": statistics.median(p["ratio"] for p in pairs),
        "ratio_min": min(p["ratio"] for p in pairs),
        "ratio_max": max(p["ratio"] for p in pairs),
        "lotwise_median": statistics.median(p["lotwise"] for p in pairs),
        "numpy_median": statistics.median(p["numpy"] for p in pairs),
        "pairs": pairs,
    }))


if __name__ == "__main__":
    main()
