"""Engine speed against a hand-written C99 loop of the same step, measured in one run.

Problems (the C program implements the same two):
  p1  one electron, B = (0, 0, 1 T), E = (1e5 V/m, 0, 0), gamma0 = 100 along +y,
      dt = T/200 (T the relativistic gyro-period), 1e7 steps, every 100th state kept;
      "norr" without radiation reaction, "full" with Landau-Lifshitz.
  p2  1e4 electrons in the same fields and dt, gamma in [50, 500), fixed quasi-random
      directions, 1e3 steps, Landau-Lifshitz on, statistics only (no per-particle arrays);
      1 and 2 threads.
Also: (c) peak memory of a statistics-only run for growing N (separate processes).

The C reference is a plain C99 file of the step (Boris push, Landau-Lifshitz kick by
operator splitting, synchronous momentum, Lienard power, cumulative energy) kept outside
the package; build it with
    cc -std=c99 -O3 -march=native -ffp-contract=off -fno-math-errno -fopenmp ref_c.c -o ref_c -lm
and pass the binary with --c-reference. Our step does more per step (field-rate term of
the LL force, a second radiation half kick for a second-order splitting, field work, chi,
a field-table dispatch), so ratios below 1 are expected; they are the trend to watch.
Only ratios measured in the same run count: the machine is shared and CPUs differ.

Run:  python benchmarks/bench_beam.py --c-reference /path/to/ref_c [--quick]
"""

import argparse
import json
import math
import os
import platform
import subprocess
import sys
import tempfile
import time

import numpy as np
from scipy import constants as sc

B_FIELD, E_FIELD, GAMMA0, SPP = 1.0, 1.0e5, 100.0, 200
PERIOD = 2 * math.pi * GAMMA0 * sc.m_e / (sc.e * B_FIELD)
DT = PERIOD / SPP


def p1_scenario(steps, rr):
    from tracker import Scenario

    return Scenario.from_dict({
        "run": {"duration": steps * DT, "dt": DT, "save_every": 100, "radiation_reaction": rr,
                "max_steps": 2 * steps},
        "particle": {"species": "electron", "gamma": GAMMA0, "direction": [0, 1, 0]},
        "field": [{"type": "uniform", "B": [0, 0, B_FIELD], "E": [E_FIELD, 0, 0]}],
    })


def p2_particles(n):
    """The C reference's p2 initial states: gamma in [50, 500), quasi-random directions (u = gamma beta)."""
    i = np.arange(n, dtype=float)
    frac = lambda a, b: (i * a + b) - np.floor(i * a + b)  # noqa: E731
    g = 50.0 + 450.0 * frac(0.4142135623730951, 0.125)
    d = np.stack([2 * frac(0.6180339887498949, 0.25) - 1, 2 * frac(0.7548776662466927, 0.5) - 1,
                  0.5 * (2 * frac(0.5698402909980532, 0.75) - 1)], axis=1)
    return np.sqrt(g * g - 1.0)[:, None] * d / np.linalg.norm(d, axis=1)[:, None]


def p2_scenario(n, steps, folder):
    from tracker import Scenario

    u = p2_particles(n)
    path = os.path.join(folder, f"p2_{n}.csv")
    with open(path, "w") as fh:
        fh.write("x [m], y [m], z [m], ux [1], uy [1], uz [1]\n")
        for row in u:
            fh.write(f"0, 0, 0, {float(row[0])!r}, {float(row[1])!r}, {float(row[2])!r}\n")
    return Scenario.from_dict({
        "run": {"duration": steps * DT, "dt": DT, "save_every": steps, "save": "statistics",
                "radiation_reaction": "landau-lifshitz"},
        "beam": {"species": "electron", "file": path},
        "field": [{"type": "uniform", "B": [0, 0, B_FIELD], "E": [E_FIELD, 0, 0]}],
    }, base_dir=folder)


def time_engine(scenario, reps):
    from tracker import track

    track(scenario.with_run(duration=scenario.run.dt * 10))  # load the kernels
    times = []
    for _ in range(reps):
        r = track(scenario)
        times.append(r.meta["wall_time"])
    return times


def c_reference(binary, *args):
    out = subprocess.run([binary, *map(str, args)], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])["times_s"]


def memory_probe(n):
    """Peak RSS (MiB) of a fresh process running a statistics-only beam of n particles, 200 steps."""
    code = ("import resource, sys, tempfile\n"
            "sys.path.insert(0, 'benchmarks')\n"
            "from bench_beam import p2_scenario\nfrom tracker import track\n"
            f"s = p2_scenario({n}, 200, tempfile.mkdtemp())\n"
            "base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
            "track(s)\n"
            "print(base / 1024, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    before, after = map(float, out.stdout.split()[-2:])
    return before, after


def main():
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--c-reference", required=True, help="path of the built C reference binary")
    parser.add_argument("--quick", action="store_true", help="shorter runs (less stable ratios)")
    parser.add_argument("--reps", type=int, default=3)
    args = parser.parse_args()
    import numba

    steps1 = 2_000_000 if args.quick else 10_000_000
    n2, steps2 = 10_000, (300 if args.quick else 1000)
    print(f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores, "
          f"numba {numba.__version__}, python {platform.python_version()}")
    rows = []
    for mode, rr in (("norr", "none"), ("full", "landau-lifshitz")):
        ours = time_engine(p1_scenario(steps1, rr), args.reps)
        theirs = c_reference(args.c_reference, "p1", mode, steps1, 100, args.reps)
        rows.append((f"p1 {mode}: one particle", min(ours) / steps1 * 1e9, min(theirs) / steps1 * 1e9, "ns/step"))
    with tempfile.TemporaryDirectory() as folder:
        scenario = p2_scenario(n2, steps2, folder)
        for threads in (1, 2):
            numba.set_num_threads(threads)
            ours = time_engine(scenario, args.reps)
            theirs = c_reference(args.c_reference, "p2", "simd", threads, n2, steps2, args.reps)
            scalar = c_reference(args.c_reference, "p2", "scalar", threads, n2, steps2, args.reps)
            per = n2 * steps2
            rows.append((f"p2 beam, {threads} thread(s), vs C blocked", per / min(ours) / 1e6,
                         per / min(theirs) / 1e6, "M particle-steps/s"))
            rows.append((f"p2 beam, {threads} thread(s), vs C scalar", per / min(ours) / 1e6,
                         per / min(scalar) / 1e6, "M particle-steps/s"))
    print(f"{'problem':45s} {'radorbit':>12s} {'C':>12s}  ratio (speed radorbit/C)")
    for name, a, b, unit in rows:
        ratio = b / a if unit.startswith("ns") else a / b
        print(f"{name:45s} {a:12.4g} {b:12.4g}  {ratio:.2f}   [{unit}]")
    print("\n(c) statistics-only beam, 200 steps: peak RSS of a fresh process (MiB)")
    for n in (1_000, 10_000, 100_000):
        before, after = memory_probe(n)
        state = n * 23 * 8 / 2**20
        print(f"  N = {n:>7,}: {after:8.1f} (after imports {before:.1f}; particle state alone {state:.1f})")


if __name__ == "__main__":
    main()
