"""Reference (c): lotwise called from Python on the instrumentation amplifier.

    python benchmarks/python_reference.py [samples] [attribution 0/1]

Needs the lotwise package importable (the venv, or <build>/python on PYTHONPATH).
Prints one JSON line with samples_per_s (wall) and samples_per_cpu_s.
"""

from __future__ import annotations

import json
import os
import sys
import time

import lotwise

HERE = os.path.dirname(os.path.abspath(__file__))


def main() -> None:
    samples = int(sys.argv[1]) if len(sys.argv) > 1 else 1 << 20
    attribution = len(sys.argv) <= 2 or sys.argv[2] != "0"
    study = lotwise.load(os.path.join(HERE, "studies", "instrumentation_amp.toml"))
    start, cpu_start = time.perf_counter(), time.process_time()
    result = study.run(samples=samples, seed=7, threads=1, attribution=attribution)
    seconds, cpu_seconds = time.perf_counter() - start, time.process_time() - cpu_start
    print(json.dumps({
        "reference": "python",
        "attribution": attribution,
        "samples": samples,
        "seconds": seconds,
        "samples_per_s": samples / seconds,
        "samples_per_cpu_s": samples / cpu_seconds,
        "yield": result.yield_fraction,
    }))

if __name__ == "__main__":
    main()
