"""Builds the benchmarks, runs them with their references in one go and prints the
figures of docs/performance.md as ratios against the references measured in this run.

    python benchmarks/run_all.py [--build-dir build-perf] [--no-build] [--quick]
                                 [--json results.json] [--rounds N]

Needs cmake, ninja, Google Benchmark (libbenchmark-dev), numpy, and for reference (c)
the lotwise Python module (built here into <build-dir>/python, or already importable).
Single-thread rates are per CPU second of the process, so a busy machine slows the wall
clock but not the figures; thread scaling is per wall second and needs idle cores.
The ratios the targets name are judged on N back-to-back rounds (lotwise, the closed form,
numpy, one and two threads measured one straight after the other), their median printed
last: on a shared host the speed drifts between the first pass and the numpy run.
"""

from __future__ import annotations

import argparse
import glob
import json
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
INAMP = os.path.join(HERE, "studies", "instrumentation_amp.toml")


def sh(cmd: list, env: dict | None = None) -> str:
    print("+ " + " ".join(cmd), file=sys.stderr, flush=True)
    return subprocess.run(cmd, check=True, stdout=subprocess.PIPE, env=env, text=True).stdout


def build(build_dir: str) -> None:
    if not os.path.exists(os.path.join(build_dir, "build.ninja")):
        sh(["cmake", "-S", ROOT, "-B", build_dir, "-G", "Ninja", "-DCMAKE_BUILD_TYPE=Release",
            "-DLOTWISE_BUILD_BENCHMARKS=ON", "-DLOTWISE_BUILD_PYTHON=ON"])
    sh(["cmake", "--build", build_dir, "-j2", "--target", "lotwise_engine_speed",
        "lotwise_run_once"])
    try:
        sh(["cmake", "--build", build_dir, "-j2", "--target", "_core"])
    except subprocess.CalledProcessError:
        print("(the Python module did not build; reference (c) uses an installed lotwise "
              "if there is one)", file=sys.stderr)


def python_env(build_dir: str) -> dict:
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1", MKL_NUM_THREADS="1")
    # The freshly built extension next to the package sources, if there is one.
    cores = glob.glob(os.path.join(build_dir, "**", "_core*.so"), recursive=True)
    if cores:
        env["PYTHONPATH"] = os.pathsep.join(
            [os.path.dirname(os.path.dirname(cores[0])), env.get("PYTHONPATH", "")])
    return env


def gbench(build_dir: str, quick: bool) -> dict:
    exe = os.path.join(build_dir, "benchmarks", "lotwise_engine_speed")
    args = [exe, "--benchmark_format=json"]
    if quick:
        args.append("--benchmark_min_time=0.2")
    out = json.loads(sh(args))
    # Names without the timing suffixes (/min_time:..., /process_time, /real_time).
    keep = lambda part: not part.startswith("min_time:") and part not in ("process_time", "real_time")
    return {"/".join(p for p in b["name"].split("/") if keep(p)): b for b in out["benchmarks"]}


def rate(b: dict) -> float:
    return float(b["samples_per_s"])


PAIRED = ("BM_inamp/attribution:0/threads:1", "BM_inamp_closed_form",
          "BM_inamp_wall/attribution:0/threads:1", "BM_inamp_wall/attribution:0/threads:2")


def paired_rounds(build_dir: str, env: dict, rounds: int, numpy_samples: int) -> list:
    """The ratios the targets name, each from measurements taken back to back: lotwise and
    the closed form, numpy straight after, one and two threads. A shared host's speed drifts
    over seconds to minutes (by up to 2x on some hosts), so rates taken a minute apart can
    make a ratio drift as much; the median of several such rounds is the figure judged."""
    exe = os.path.join(build_dir, "benchmarks", "lotwise_engine_speed")
    pattern = "^(" + "|".join(PAIRED) + ")/"
    out = []
    for r in range(rounds):
        text = sh([exe, "--benchmark_format=json", "--benchmark_filter=" + pattern,
                   "--benchmark_min_time=0.5"])
        g = json.loads(text[text.index("{"):])
        keep = lambda part: not part.startswith("min_time:") and part not in ("process_time", "real_time")
        b = {"/".join(p for p in x["name"].split("/") if keep(p)): rate(x) for x in g["benchmarks"]}
        numpy_rate = json.loads(sh([sys.executable, os.path.join(HERE, "numpy_reference.py"),
                                    str(numpy_samples)], env=env))["samples_per_cpu_s"]
        lw, closed = b[PAIRED[0]], b[PAIRED[1]]
        two = b[PAIRED[3]] / b[PAIRED[2]]
        host = two_processes(exe) / b[PAIRED[2]]
        out.append({"lotwise": lw, "closed_form": closed, "numpy": numpy_rate,
                    "vs_numpy": lw / numpy_rate, "vs_closed_form": closed / lw,
                    "two_threads": two, "two_processes": host})
        print(f"  round {r + 1}: lotwise {lw / 1e6:.2f} M/s, numpy {numpy_rate / 1e6:.3f} M/s "
              f"-> {lw / numpy_rate:.1f}x; closed form {closed / lw:.2f}x lotwise's time; "
              f"two threads {two:.2f}x (two separate processes {host:.2f}x)",
              file=sys.stderr, flush=True)
    return out


def two_processes(exe: str) -> float:
    """What the host gives two busy cores: the summed wall rates of two single-thread runs
    started together in separate processes (nothing shared between them). On a virtual
    machine whose second core is at times taken by a neighbour this falls below 2, and no
    thread scaling can exceed it."""
    args = [exe, "--benchmark_format=json", "--benchmark_min_time=0.5",
            "--benchmark_filter=^" + PAIRED[2] + "/"]
    procs = [subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
             for _ in range(2)]
    total = 0.0
    for p in procs:
        text, _ = p.communicate()
        if p.returncode != 0:
            raise subprocess.CalledProcessError(p.returncode, args)
        total += rate(json.loads(text[text.index("{"):])["benchmarks"][0])
    return total


def non_negative(text: str) -> int:
    if not text.isdigit():
        raise argparse.ArgumentTypeError(f"must be a whole number >= 0, not '{text}'")
    return int(text)


def median(values: list) -> float:
    v = sorted(values)
    n = len(v)
    return v[n // 2] if n % 2 else 0.5 * (v[n // 2 - 1] + v[n // 2])


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--build-dir", default=os.path.join(ROOT, "build-perf"))
    ap.add_argument("--no-build", action="store_true")
    ap.add_argument("--quick", action="store_true", help="shorter runs, memory up to 1e6")
    ap.add_argument("--json", help="also write every figure to this file")
    ap.add_argument("--rounds", type=non_negative, default=None,
                    help="back-to-back rounds for the judged ratios (default 5, 2 with --quick)")
    a = ap.parse_args()
    build_dir = os.path.abspath(a.build_dir)
    if not a.no_build:
        build(build_dir)
    env = python_env(build_dir)
    figures: dict = {}

    g = gbench(build_dir, a.quick)
    figures["google_benchmark"] = g
    lw0 = rate(g["BM_inamp/attribution:0/threads:1"])
    lw1 = rate(g["BM_inamp/attribution:1/threads:1"])
    closed = rate(g["BM_inamp_closed_form"])
    draws = rate(g["BM_inamp_draws_only"])

    numpy_ref = json.loads(sh([sys.executable, os.path.join(HERE, "numpy_reference.py"),
                               "50000" if a.quick else "200000"], env=env))
    figures["numpy"] = numpy_ref
    py = {}
    for attribution in ("0", "1"):
        try:
            py[attribution] = json.loads(sh([sys.executable, os.path.join(HERE, "python_reference.py"),
                                             str(1 << 18 if a.quick else 1 << 20), attribution],
                                            env=env))
        except subprocess.CalledProcessError:
            py[attribution] = None
    figures["python"] = py

    print("\n== Instrumentation amplifier (13 varied parameters), one core, samples per CPU second")
    print(f"  lotwise, attribution off        {lw0:12.0f}")
    print(f"  lotwise, attribution on         {lw1:12.0f}   (attribution costs "
          f"{100.0 * (lw0 / lw1 - 1.0):.0f} % more time)")
    print(f"  (a) closed form, same draws     {closed:12.0f}   lotwise is {closed / lw0:.2f}x "
          f"slower (target <= 1.5x); {closed / lw1:.2f}x with attribution")
    print(f"      draws alone                 {draws:12.0f}")
    print(f"  (b) numpy batched solve         {numpy_ref['samples_per_cpu_s']:12.0f}   lotwise is "
          f"{lw0 / numpy_ref['samples_per_cpu_s']:.0f}x faster (target >= 30x); "
          f"{lw1 / numpy_ref['samples_per_cpu_s']:.0f}x with attribution; the closed form "
          f"itself is {closed / numpy_ref['samples_per_cpu_s']:.0f}x)")
    for attribution, label in (("0", "off"), ("1", "on")):
        r = py.get(attribution)
        if r:
            base = lw0 if attribution == "0" else lw1
            print(f"  (c) lotwise from Python, attr. {label:3s}{r['samples_per_cpu_s']:12.0f}   "
                  f"{r['samples_per_cpu_s'] / base:.2f}x the C++ rate")
        else:
            print(f"  (c) lotwise from Python, attr. {label}: not available (module not importable)")

    parts = {
        "sampling (a block of draws, values in one pass)": rate(g["BM_inamp_part_sampling"]),
        "evaluate one at a time (fill, factor, 3 solves, measurements)":
            rate(g["BM_inamp_part_evaluate/lanes:0"]),
        "evaluate 16 side by side (the same work)": rate(g["BM_inamp_part_evaluate/lanes:1"]),
    }
    print("\n== Where one in-amp sample's time goes (ns per sample)")
    for k, v in parts.items():
        print(f"  {k:64s}{1e9 / v:8.1f}")
    print(f"  {'whole Study::run, attribution off':64s}{1e9 / lw0:8.1f}")
    print(f"  {'whole Study::run, attribution on':64s}{1e9 / lw1:8.1f}")
    dense = rate(g["BM_inamp_part_factor_solve/pattern:0"])
    pattern = rate(g["BM_inamp_part_factor_solve/pattern:1"])
    print(f"  factor + 3 solves: dense LU {1e9 / dense:.1f} ns, reused pattern "
          f"{1e9 / pattern:.1f} ns ({dense and pattern / dense:.1f}x faster)")

    print("\n== Schmitt trigger trip points, one core")
    for k in ("BM_schmitt/attribution:0", "BM_schmitt/attribution:1"):
        print(f"  {k:40s}{rate(g[k]):12.0f} samples/s")

    print("\n== Filter chain: cost per sample against nonzeros (AC, 3 gains + 1 phase)")
    print("  stages unknowns  L+U nnz  updates  samples/s   ns/sample  ns/sample/nnz")
    for name, b in g.items():
        if not name.startswith("BM_filter_chain") or not name.endswith("attribution:0"):
            continue
        r = rate(b)
        stages = name.split("stages:")[1].split("/")[0]
        nnz = float(b["nonzeros_LU"])
        print(f"  {stages:>6s} {b['unknowns']:8.0f} {nnz:8.0f} {b['updates_LU']:8.0f} {r:10.0f} "
              f"{1e9 / r:11.0f} {1e9 / r / nnz:13.2f}")

    w1 = rate(g["BM_inamp_wall/attribution:0/threads:1"])
    w2 = rate(g["BM_inamp_wall/attribution:0/threads:2"])
    print(f"\n== Thread scaling (wall clock, in-amp): 1 thread {w1:.0f}/s, 2 threads {w2:.0f}/s, "
          f"{w2 / w1:.2f}x (target >= 1.8x; needs two idle cores)")

    rounds = a.rounds if a.rounds is not None else (2 if a.quick else 5)
    if rounds > 0:
        paired = paired_rounds(build_dir, env, rounds, 50000 if a.quick else 100000)
        figures["paired_rounds"] = paired
        spread = lambda key: (min(r[key] for r in paired), max(r[key] for r in paired))
        print(f"\n== The judged ratios: median of {rounds} back-to-back rounds (range)")
        for key, label, target in (("vs_numpy", "lotwise against numpy", ">= 30x faster"),
                                   ("vs_closed_form", "lotwise's time against the closed form's",
                                    "<= 1.5x"),
                                   ("two_threads", "two threads against one (wall)", ">= 1.8x"),
                                   ("two_processes", "the host: two processes against one",
                                    "the ceiling of the line above")):
            lo, hi = spread(key)
            print(f"  {label:42s}{median([r[key] for r in paired]):7.2f}x  "
                  f"({lo:.2f}-{hi:.2f}; {'' if key == 'two_processes' else 'target '}{target})")
        try:
            bursts = json.loads(sh([sys.executable, os.path.join(HERE, "interleaved_ratio.py"),
                                    "25" if a.quick else "200"], env=env))
        except subprocess.CalledProcessError:
            bursts = None
        figures["interleaved"] = bursts
        if bursts:
            q1, q3 = bursts["ratio_quartiles"]
            print(f"  {'lotwise from Python against numpy, bursts':42s}{bursts['ratio_median']:7.2f}x  "
                  f"(quartiles {q1:.2f}-{q3:.2f}, range {bursts['ratio_min']:.2f}-"
                  f"{bursts['ratio_max']:.2f}, {100 * bursts['share_at_target']:.0f} % of pairs "
                  f"at the target; target >= 30x faster; {bursts['bursts']} alternating pairs "
                  "in one process)")
        else:
            print("  lotwise from Python against numpy, bursts: not available (module not importable)")

    print("\n== Peak memory against sample count (in-amp, attribution on, no kept samples)")
    run_once = os.path.join(build_dir, "benchmarks", "lotwise_run_once")
    counts = [10**5, 10**6] if a.quick else [10**5, 10**6, 10**7, 10**8]
    figures["memory"] = []
    for n in counts:
        r = json.loads(sh([run_once, INAMP, str(n), "1", "1"]))
        figures["memory"].append(r)
        print(f"  {n:>10d} samples: max RSS {r['max_rss_kib'] / 1024:7.1f} MiB, "
              f"{r['samples_per_s']:10.0f} samples/s (wall)")
    if a.json:
        with open(a.json, "w") as f:
            json.dump(figures, f, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
