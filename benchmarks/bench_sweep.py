"""Cost of a parameter scan around its runs, and how it scales with workers.

Measured in one run (the baselines in the same process):
1. Overhead per point beyond the runs themselves: a scan of N tiny points (a few thousand
   steps each) against the same points' damped and undamped runs called directly in a
   loop (``tracker.scan.point.run_comparison``); local threads with one worker, and a
   dask.distributed LocalCluster with one single-threaded worker process (warmed up first).
2. Threads against processes for local execution: a 64-point scan on 2 workers as our
   thread pool, and as a ``ProcessPoolExecutor`` (spawn) running the same point function,
   start-up included (what a user would pay).
3. Speed-up of a 64-point scan from 1 to 2 workers (threads, and LocalCluster workers).

Run:  OMP_WAIT_POLICY=PASSIVE python benchmarks/bench_sweep.py [--quick]
The machine is shared: rerun before concluding; compare ratios, not absolute times.
"""

import argparse
import multiprocessing
import os
import platform
import time
from concurrent.futures import ProcessPoolExecutor

from tracker import Scenario, sweep
from tracker.scan.point import compute_point, run_comparison
from tracker.sweep import build_points


def collision(duration_fs, spp):
    """A head-on 0.5 GeV electron and an 8 fs pulse; cost set by duration and steps per period."""
    return Scenario.from_dict({
        "run": {"duration": f"{duration_fs} fs", "steps_per_period": spp, "save_every": 50,
                "pusher": "higuera-cary"},
        "particle": {"species": "electron", "kinetic_energy": "0.5 GeV", "direction": [0, 0, -1]},
        "field": [{"type": "plane-wave", "a0": 10.0, "wavelength": 0.8e-6, "direction": [0, 0, 1],
                   "envelope": "sin2", "duration": "8 fs", "peak_position": [0, 0, -8e-6]}],
    })


def a0_values(n):
    return [5.0 + 20.0 * i / max(1, n - 1) for i in range(n)]


def timed(fn):
    start = time.perf_counter()
    out = fn()
    return time.perf_counter() - start, out


def cpu_timed(fn):
    """CPU seconds of this process (all its threads): steadier than wall time on a busy machine."""
    start = time.process_time()
    fn()
    return time.process_time() - start


def direct_loop(base, vary):
    points, _ = build_points(base, tuple((k, tuple(v)) for k, v in vary.items()), True)
    return timed(lambda: [run_comparison(p) for p in points])[0]


def processes_scan(base, vary, workers):
    points, _ = build_points(base, tuple((k, tuple(v)) for k, v in vary.items()), True)
    texts = [p.to_toml() for p in points]

    def run():
        with ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("spawn")) as pool:
            return list(pool.map(compute_point, texts))

    return timed(run)[0]


def dask_cluster(workers):
    from distributed import Client, LocalCluster

    cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None)
    client = Client(cluster)
    client.run(lambda: __import__("tracker") and None)
    return cluster, client


def _noop(i):
    return i


def _dask_noops(client, n):
    from distributed import as_completed

    futures = [client.submit(_noop, i, pure=False) for i in range(n)]
    return [f.result() for f in as_completed(futures)]


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true", help="smaller scans (a smoke test of the script)")
    args = parser.parse_args()
    n_tiny, n_scan = (40, 16) if args.quick else (200, 64)
    print(f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores, "
          f"load average {os.getloadavg()[0]:.2f}")

    tiny = collision(20, 20)
    sweep(tiny, {"field[0].a0": [5.0]}, workers=1)              # kernels loaded once
    vary = {"field[0].a0": a0_values(n_tiny)}
    plain = direct_loop(tiny, vary)
    local = timed(lambda: sweep(tiny, vary, workers=1))[0]
    plain_cpu = cpu_timed(lambda: direct_loop(tiny, vary))
    local_cpu = cpu_timed(lambda: sweep(tiny, vary, workers=1))
    per_run = plain / n_tiny
    print(f"\n1. overhead per point ({n_tiny} points, runs alone {1e3 * per_run:.2f} ms per point)")
    print(f"   local threads, 1 worker : {1e3 * (local - plain) / n_tiny:7.2f} ms per point wall, "
          f"{1e3 * (local_cpu - plain_cpu) / n_tiny:.2f} ms CPU")
    cluster, client = dask_cluster(1)
    try:
        sweep(tiny, {"field[0].a0": [5.0, 6.0]}, client=client)   # worker loads its kernels
        remote = timed(lambda: sweep(tiny, vary, client=client))[0]
        noop = timed(lambda: _dask_noops(client, n_tiny))[0]
    finally:
        client.close()
        cluster.close()
    print(f"   dask LocalCluster, 1 worker process: {1e3 * (remote - plain) / n_tiny:7.2f} ms per point "
          f"(dask alone, no-op tasks submitted the same way: {1e3 * noop / n_tiny:.2f} ms per task)")

    work = collision(150, 1000 if not args.quick else 400)   # ~2.5e5 steps per point (both runs)
    vary = {"field[0].a0": a0_values(n_scan)}
    cpu_start = time.process_time()
    one = timed(lambda: sweep(work, vary, workers=1))[0]
    cpu_one = time.process_time() - cpu_start
    cpu_start = time.process_time()
    two = timed(lambda: sweep(work, vary, workers=2))[0]
    cpu_two = time.process_time() - cpu_start
    procs = processes_scan(work, vary, 2)
    print(f"\n2. {n_scan}-point scan, {1e3 * one / n_scan:.0f} ms per point on one worker")
    print(f"   threads, 2 workers   : {two:6.2f} s")
    print(f"   processes (spawn), 2 : {procs:6.2f} s   (threads are {procs / two:.2f}x faster)")
    print(f"\n3. speed-up from 1 to 2 workers, {n_scan} points")
    print(f"   local threads        : {one:6.2f} s -> {two:6.2f} s = {one / two:.2f}x "
          f"(CPU {cpu_one:.2f} s -> {cpu_two:.2f} s: the ceiling is {cpu_two / two:.2f} busy cores of ours)")
    timings = []
    for workers in (1, 2):
        cluster, client = dask_cluster(workers)
        try:
            sweep(work, {"field[0].a0": a0_values(2 * workers)}, client=client)
            timings.append(timed(lambda: sweep(work, vary, client=client))[0])
        finally:
            client.close()
            cluster.close()
    print(f"   dask LocalCluster    : {timings[0]:6.2f} s -> {timings[1]:6.2f} s = {timings[0] / timings[1]:.2f}x")
    print(f"\nload average at the end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
