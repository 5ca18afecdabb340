"""Throughput of ``tracker.track`` against a plain Python loop and scipy's solve_ivp, in one run.

Problem (issue 2): one electron, gamma0 = 100, uniform B = 1 T, 200 steps per
gyration, 1e7 steps, Landau-Lifshitz radiation reaction and all diagnostics on,
every 100th state saved.

Baselines, measured in the same process:
- the same leapfrog step (Boris + LL kick + synchronous diagnostics) written as a
  plain Python loop with ``math`` (what a user would write first);
- scipy.integrate.solve_ivp (DOP853) on the same equations of motion, with rtol
  chosen so its position error after a fixed number of gyrations is no worse than
  the engine's at 200 steps per gyration ("matched accuracy").
Also: compile cost paid once — a cold process (empty numba cache) vs a warm one.

Run:  python benchmarks/bench_track.py [--quick]
"""

import argparse
import math
import os
import platform
import subprocess
import sys
import tempfile
import time

import numpy as np
from scipy import constants as sc
from scipy.integrate import solve_ivp

from tracker import Scenario, track

Q, M, C, EPS0 = -sc.e, sc.m_e, sc.c, sc.epsilon_0
TAU0 = Q**2 / (6 * math.pi * EPS0 * M * C**3)
B_FIELD, GAMMA0, SPP = 1.0, 100.0, 200
OMEGA = abs(Q) * B_FIELD / (GAMMA0 * M)
PERIOD = 2 * math.pi / OMEGA


def bench_scenario(steps):
    return Scenario.from_dict({
        "run": {"duration": steps * PERIOD / SPP, "steps_per_period": SPP, "save_every": 100,
                "radiation_reaction": "landau-lifshitz"},
        "particle": {"species": "electron", "gamma": GAMMA0, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0, 0, B_FIELD]}],
    })


def python_loop(steps, dt):
    """The engine's step in plain Python (uniform B along z, E = 0, LL terms 2 and 3)."""
    qm = Q / M
    ux, uy, uz = math.sqrt(GAMMA0**2 - 1), 0.0, 0.0
    x = y = 0.0
    radiated = 0.0
    p_prev = 0.0
    b = B_FIELD
    tau = 0.5 * qm * dt * b
    pscale = Q**2 * TAU0 / M
    xs = []
    for n in range(steps):
        g_old = math.sqrt(1 + ux * ux + uy * uy + uz * uz)
        t = tau / g_old
        s = 2 * t / (1 + t * t)
        upx = ux + uy * t
        upy = uy - ux * t
        lx = ux + upy * s
        ly = uy - upx * s
        lz = uz
        g_l = math.sqrt(1 + lx * lx + ly * ly + lz * lz)
        gs = 0.5 * (g_old + g_l)
        sx, sy = ux + lx, uy + ly
        scale = math.sqrt((gs * gs - 1) / ((sx * sx + sy * sy) * gs * gs))
        bx, by = sx * scale, sy * scale
        f2 = (C * b) ** 2 * (bx * bx + by * by)
        power = pscale * gs * gs * f2
        if n:
            radiated += 0.5 * dt * (power + p_prev)
        p_prev = power
        k = dt * qm * TAU0 / C * qm * (-C * b * b - gs * gs * f2 / C)
        lx += k * bx
        ly += k * by
        g_new = math.sqrt(1 + lx * lx + ly * ly + lz * lz)
        x += C * dt * lx / g_new
        y += C * dt * ly / g_new
        ux, uy, uz = lx, ly, lz
        if n % 100 == 0:
            xs.append((x, y, gs, power, radiated))
    return x, y


def ll_rhs(t, state):
    """Lab-frame LL equations of motion in uniform B (terms 2 and 3; term 1 vanishes)."""
    x, y, ux, uy = state
    g = math.sqrt(1 + ux * ux + uy * uy)
    bx, by = ux / g, uy / g
    qm = Q / M
    lorentz_x, lorentz_y = qm * B_FIELD * by, -qm * B_FIELD * bx
    f2 = (C * B_FIELD) ** 2 * (bx * bx + by * by)
    rr = qm * TAU0 / C * qm * (-C * B_FIELD**2 - g * g * f2 / C)
    return [C * bx, C * by, lorentz_x + rr * bx, lorentz_y + rr * by]


def position_error(xy, t):
    """Distance from the exact circle position (cooling over the window is < 1e-9), m."""
    r = M * C * math.sqrt(GAMMA0**2 - 1) / (abs(Q) * B_FIELD)
    # electron (q < 0) starting along +x at the origin circles counter-clockwise about (0, r)
    exact = np.array([r * np.sin(OMEGA * t), r - r * np.cos(OMEGA * t)])
    return float(np.hypot(*(np.asarray(xy) - exact)))


def cold_and_warm_start():
    """Seconds for a fresh process to import and run a tiny scenario: empty cache, then warm."""
    code = ("import time; t = time.perf_counter(); from tracker import track, load_scenario; "
            "track(load_scenario('scenarios/storage_ring_bend.toml').with_run(duration=1e-10)); "
            "print(time.perf_counter() - t)")
    with tempfile.TemporaryDirectory() as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache)
        root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
        times = [float(subprocess.run([sys.executable, "-c", code], env=env, cwd=root, check=True,
                                      capture_output=True, text=True).stdout) for _ in range(2)]
    return times


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true", help="1e6 engine steps instead of 1e7")
    args = parser.parse_args()
    steps = 1_000_000 if args.quick else 10_000_000
    print(f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores, "
          f"python {platform.python_version()}")

    scenario = bench_scenario(steps)
    track(bench_scenario(1000))                        # load kernels (numba cache)
    runs = [track(scenario).meta for _ in range(3)]
    engine_rate = max(m["steps_per_second"] for m in runs)
    print(f"engine      : {engine_rate:.3e} steps/s (best of 3, {steps:.0e} steps)")

    dt = PERIOD / SPP
    py_steps = 200_000
    t0 = time.perf_counter()
    python_loop(py_steps, dt)
    py_rate = py_steps / (time.perf_counter() - t0)
    print(f"python loop : {py_rate:.3e} steps/s   -> engine is {engine_rate / py_rate:.0f}x faster")

    # matched accuracy over 100 gyrations
    gyrations = 100
    window = bench_scenario(gyrations * SPP).with_run(save_every=1)
    result = track(window)
    engine_err = position_error(result.x[-1, :2], result.t[-1])
    y0 = [0.0, 0.0, math.sqrt(GAMMA0**2 - 1), 0.0]
    for rtol in (1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11):
        t0 = time.perf_counter()
        sol = solve_ivp(ll_rhs, (0, result.t[-1]), y0, method="DOP853", rtol=rtol, atol=1e-12 * rtol)
        ivp_time = time.perf_counter() - t0
        ivp_err = position_error(sol.y[:2, -1], sol.t[-1])
        if ivp_err <= engine_err:
            break
    ivp_rate = gyrations * SPP / ivp_time             # engine steps covered per second of solve_ivp
    print(f"accuracy    : engine position error after {gyrations} gyrations {engine_err:.2e} m "
          f"(gyroradius {M * C * GAMMA0 / (abs(Q) * B_FIELD):.3e} m)")
    print(f"solve_ivp   : DOP853 rtol={rtol:g} error {ivp_err:.2e} m in {ivp_time:.3f} s = "
          f"{ivp_rate:.3e} equivalent steps/s -> engine is {engine_rate / ivp_rate:.0f}x faster")

    cold, warm = cold_and_warm_start()
    print(f"start-up    : fresh process, empty numba cache {cold:.2f} s; second process {warm:.2f} s")


if __name__ == "__main__":
    main()
