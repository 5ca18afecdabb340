"""Radiation-integral spectrum: NUFFT (finufft type 3) against the direct sum, in one run.

Problem (issue 4): 1e5 trajectory samples x 1e3 frequencies x 100 directions.
The trajectory is a 1 GeV electron through a 50-period planar undulator
(lambda_u = 2 cm, B0 = 0.5 T) at 2000 steps per period, without damping; the
directions form a 10 x 10 grid within +-1/gamma of the axis and the
frequencies span 0.5 .. 3.5 times the on-axis fundamental (330 eV), so the
first three harmonics are in the band.

Both methods are timed end to end through ``tracker.radiation.spectrum`` (the
shared preparation of the integrand is included in both). The direct sum costs
the same for every direction, so by default it runs on a subset of the
directions and its time is scaled linearly to 100 (``--direct-directions 100``
runs it in full, ~3 min on two cores). The agreement is measured on that subset.
Baseline: the same sum written with NumPy (chunked exp(1j outer(omega, tau)) @
amplitudes) on one direction, scaled to 100.

Run:  python benchmarks/bench_spectrum.py [--direct-directions N] [--repeats R]
"""

import argparse
import math
import os

os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

import platform  # noqa: E402
import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

from tracker import Scenario, track  # noqa: E402
from tracker import constants as k  # noqa: E402
from tracker.radiation import polarization_basis, spectrum  # noqa: E402

SPEC = sys.modules["tracker.radiation.spectrum"]   # the module (the package exports the function)

GAMMA_KINETIC = "0.99948900 GeV"   # total energy 1 GeV
PERIOD, B0, N_PERIODS, STEPS_PER_PERIOD = 0.02, 0.5, 50, 2000
N_DIRECTIONS_SIDE, N_OMEGA = 10, 1000


def undulator_result():
    """Track the electron through the undulator only: 50 periods x 2000 steps = 1e5 samples."""
    length = N_PERIODS * PERIOD
    scenario = Scenario.from_dict({
        "run": {"duration": length / k.c, "steps_per_period": STEPS_PER_PERIOD, "radiation_reaction": "none"},
        "particle": {"species": "electron", "position": [0.0, 0.0, 0.0], "kinetic_energy": GAMMA_KINETIC,
                     "direction": [0.0, 0.0, 1.0]},
        "field": [{"type": "undulator", "B0": B0, "period": PERIOD, "length": length, "start": 0.0}],
    })
    return track(scenario)


def problem(result):
    gamma = float(result.gamma[0])
    K = k.e * B0 * PERIOD / (2 * math.pi * k.m_e * k.c)
    omega_1 = 2 * math.pi * k.c / (PERIOD / (2 * gamma**2) * (1 + K**2 / 2))
    side = np.linspace(-1.0, 1.0, N_DIRECTIONS_SIDE) / gamma
    directions = np.array([[a, b, 1.0] for a in side for b in side])
    directions /= np.linalg.norm(directions, axis=1)[:, None]
    omega = np.linspace(0.5, 3.5, N_OMEGA) * omega_1
    return directions, omega, omega_1


def numpy_direct(result, direction, omega, chunk=25):
    """The sum as a NumPy user would write it, for one direction (same integrand and weights)."""
    prepared = SPEC._Prepared(result, "auto", SPEC.DEFAULT_TAPER)
    n = direction[None, :]
    tau, amp, _ = prepared.chunk(n, polarization_basis(n))
    out = np.empty((2, len(omega)), dtype=complex)
    for start in range(0, len(omega), chunk):
        phase = np.exp(1j * np.outer(omega[start:start + chunk], tau[0]))
        out[:, start:start + chunk] = (phase @ amp[0].T).T
    return SPEC.prefactor(result.scenario.particle.charge) * (np.abs(out) ** 2).sum(axis=0)


def machine():
    model = "unknown CPU"
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            for line in fh:
                if line.startswith("model name"):
                    model = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    import finufft
    import numba

    load = os.getloadavg() if hasattr(os, "getloadavg") else (float("nan"),) * 3
    try:
        layer = numba.threading_layer()
    except ValueError:  # no parallel region has run yet
        layer = numba.config.THREADING_LAYER
    return (f"{model}, {os.cpu_count()} cores, Python {platform.python_version()}, numba {numba.__version__} "
            f"({layer} layer, {numba.get_num_threads()} threads), finufft "
            f"{finufft.__version__}, OMP_WAIT_POLICY={os.environ.get('OMP_WAIT_POLICY')}, "
            f"load average {load[0]:.2f}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--direct-directions", type=int, default=10,
                        help="directions for the direct sum (scaled linearly to 100; default 10)")
    parser.add_argument("--repeats", type=int, default=3, help="NUFFT repeats, median reported (default 3)")
    args = parser.parse_args(argv)

    result = undulator_result()
    directions, omega, omega_1 = problem(result)
    n_dir = len(directions)
    subset = directions[:: max(1, n_dir // max(1, args.direct_directions))][: args.direct_directions]
    used = SPEC._Prepared(result, "auto", SPEC.DEFAULT_TAPER).count
    print(f"problem: {len(result.t):,} saved states ({used:,} with acceleration) x {len(omega)} frequencies "
          f"({omega[0]:.4g} .. {omega[-1]:.4g} rad/s) x {n_dir} directions")

    # compile / load both kernels and the finufft library outside the timings
    spectrum(result, directions[:2], omega[:4], method="nufft")
    spectrum(result, directions[:2], omega[:4], method="direct")
    print("machine:", machine())

    nufft_times = []
    for _ in range(max(1, args.repeats)):
        start = time.perf_counter()
        fast = spectrum(result, directions, omega, method="nufft")
        nufft_times.append(time.perf_counter() - start)
    t_nufft = statistics.median(nufft_times)

    start = time.perf_counter()
    direct = spectrum(result, subset, omega, method="direct")
    t_direct_subset = time.perf_counter() - start
    t_direct = t_direct_subset * n_dir / len(subset)

    start = time.perf_counter()
    baseline = numpy_direct(result, subset[0], omega)
    t_numpy = (time.perf_counter() - start) * n_dir

    index = [int(np.argmin(np.linalg.norm(directions - n, axis=1))) for n in subset]
    reference = fast[index]
    max_rel = float(np.max(np.abs(direct - reference)) / np.max(np.abs(direct)))
    l2_rel = float(np.linalg.norm(direct - reference) / np.linalg.norm(direct))
    numpy_rel = float(np.max(np.abs(baseline - direct[0])) / np.max(np.abs(direct[0])))

    terms = used * len(omega) * n_dir
    print(f"NUFFT (finufft type 3, eps {SPEC.DEFAULT_EPS:g}): {t_nufft:.3f} s for {n_dir} directions "
          f"(median of {len(nufft_times)}: {', '.join(f'{t:.3f}' for t in nufft_times)} s)")
    print(f"direct sum (numba, parallel): {t_direct_subset:.2f} s for {len(subset)} directions -> "
          f"{t_direct:.1f} s for {n_dir} (scaled linearly), {t_direct / terms * 1e9:.2f} ns per term")
    print(f"NumPy sum (1 direction, scaled): {t_numpy:.1f} s for {n_dir}")
    print(f"speed-up NUFFT vs direct: {t_direct / t_nufft:.1f}x ; vs NumPy: {t_numpy / t_nufft:.1f}x")
    print(f"agreement NUFFT vs direct on {len(subset)} directions: max |diff|/max = {max_rel:.2e}, "
          f"relative l2 = {l2_rel:.2e}; NumPy vs direct: {numpy_rel:.2e}")
    ok = t_direct / t_nufft >= 50 and max_rel <= 1e-6
    print("target (>= 50x at <= 1e-6 relative difference):", "met" if ok else "NOT met")
    print("machine load at the end:", f"{os.getloadavg()[0]:.2f}" if hasattr(os, "getloadavg") else "n/a")
    return 0


if __name__ == "__main__":
    sys.exit(main())
