"""Where the points of a scan run: threads on this machine, or a ``dask.distributed`` cluster.

Local points run on a thread pool: the kernels release the GIL, so threads use every core
without the start-up and kernel-loading cost of new processes (measured in
``benchmarks/bench_sweep.py``; README quotes it). With a ``distributed.Client`` the points
are dask tasks: the scenario goes out as TOML text, the row (and, when kept, the runs)
come back as plain data, and dask's own ``retries=1`` re-runs a failed point once.
"""

import os
from concurrent.futures import ThreadPoolExecutor, as_completed

from .point import CANCELLED, PointCancelled, compute_point, failed_row

ATTEMPTS = 2          #: a failing point is tried twice (retried once)
POLL_SECONDS = 0.25   #: how often a dask scan looks at its cancel flag while waiting


def default_workers():
    """Cores this process may use."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def _is_set(cancel):
    if cancel is None:
        return False
    return cancel.is_set() if hasattr(cancel, "is_set") else bool(cancel())


def _cancelled():
    return {"row": {"status": CANCELLED, "error": "the scan was cancelled before this point finished"}}


def _error_text(exc):
    return f"{type(exc).__name__}: {exc}"


def _local_point(scenario, keep, cancel):
    """One point with one retry; never raises (the row says what went wrong)."""
    errors = []
    for _ in range(ATTEMPTS):
        if _is_set(cancel):
            return _cancelled()
        try:
            return compute_point(scenario, keep, cancel=cancel)
        except PointCancelled:
            return _cancelled()
        except Exception as exc:  # recorded in the row, never dropped
            errors.append(_error_text(exc))
    return {"row": failed_row(f"{errors[-1]} (failed {ATTEMPTS} times)")}


def run_points(jobs, on_done, *, client=None, workers=None, keep=False, cancel=None):
    """Run ``jobs`` = [(index, Scenario, its TOML text)]; call ``on_done(index, outcome)`` on this thread.

    Local threads take the validated Scenario itself; a dask cluster gets the TOML text.

    ``outcome`` is ``compute_point``'s dict ({"row": ..., "results": ...}); failed and
    cancelled points come back too, with ``row["status"]`` saying so.
    """
    if not jobs:
        return
    if client is not None:
        _run_on_dask(jobs, on_done, client, keep, cancel)
        return
    pool = ThreadPoolExecutor(max_workers=max(1, int(workers or default_workers())),
                              thread_name_prefix="radorbit-sweep")
    try:
        futures = {pool.submit(_local_point, scenario, keep, cancel): index for index, scenario, _ in jobs}
        for future in as_completed(futures):
            on_done(futures[future], future.result())
    finally:
        # on an exception here (a second Ctrl-C) points not started yet are dropped, not run
        pool.shutdown(wait=True, cancel_futures=True)


def _run_on_dask(jobs, on_done, client, keep, cancel):
    import threading

    from distributed import as_completed

    futures = {}
    for index, _, text in jobs:
        future = client.submit(compute_point, text, keep, key=f"radorbit-point-{index}-{os.urandom(6).hex()}",
                               retries=ATTEMPTS - 1, pure=False)
        futures[future] = index
    finished = threading.Event()

    def watch_cancel():
        # cancelled tasks come out of as_completed at once, so the loop below ends promptly
        while not finished.wait(POLL_SECONDS):
            if _is_set(cancel):
                client.cancel([f for f in futures if not f.done()])
                return

    watcher = threading.Thread(target=watch_cancel, name="radorbit-sweep-cancel", daemon=True)
    if cancel is not None:
        watcher.start()
    try:
        for future in as_completed(futures):
            on_done(futures[future], _dask_outcome(future))
    finally:
        finished.set()
        for future in futures:
            future.release()


def _dask_outcome(future):
    if future.status == "finished":
        return future.result()
    if future.status == "cancelled":
        return _cancelled()
    exc = future.exception()
    return {"row": failed_row(f"{_error_text(exc)} (failed {ATTEMPTS} times)")}
