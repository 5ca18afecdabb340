"""Measure how long `radorbit lab` takes from launch to an interactive page (not a test).

For each mode a fresh `radorbit lab` process is started and Debian's Chromium (already
running) opens it. Times are taken from the process launch:

* ``http``: the server answers HTTP 200;
* ``page``: the Run button is enabled and the field preview has drawn its first map
  (this needs the field evaluator, compiled or loaded from numba's cache);
* ``first run``: the default scenario's first damped/undamped run is on the page
  (this needs the pusher kernel).

``cold`` points NUMBA_CACHE_DIR at an empty folder, so every kernel compiles; ``warm``
reuses the folder the cold start filled. The project's own cache beside the sources is
not touched.

    python tests/ui/cold_start.py [--repeat 3]
"""

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from lab_helpers import CHROMIUM, CHROMIUM_ARGS, ROOT, free_port, stop_server, wait_for_http  # noqa: E402

PREVIEW_DRAWN = ("() => { for (const d of Bokeh.documents) for (const m of d.all_models)"
                 " if (m.data && m.data.image && m.data.image.length) return true; return false; }")


def one_start(browser, cache_dir):
    """(http, page, first run) seconds after launching one `radorbit lab` process."""
    from playwright.sync_api import expect

    port = free_port()
    env = {**os.environ, "NUMBA_CACHE_DIR": str(cache_dir), "OMP_WAIT_POLICY": "PASSIVE"}
    with tempfile.TemporaryFile() as log:
        start = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-m", "tracker", "lab", "--port", str(port)], cwd=ROOT, env=env,
                                stdout=log, stderr=subprocess.STDOUT)
        try:
            url = f"http://127.0.0.1:{port}/"
            wait_for_http(url, timeout=300, process=proc)
            http = time.perf_counter() - start
            page = browser.new_page(viewport={"width": 1600, "height": 1000})
            page.goto(url)
            expect(page.locator(".run-button button")).to_be_enabled(timeout=300_000)
            page.wait_for_function(PREVIEW_DRAWN, timeout=300_000)
            interactive = time.perf_counter() - start
            page.locator(".run-button button").click()
            expect(page.locator('#run-status[data-status="completed"]')).to_be_visible(timeout=300_000)
            first_run = time.perf_counter() - start
            page.close()
        finally:
            stop_server(proc)
    return http, interactive, first_run


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    from playwright.sync_api import sync_playwright

    rows = {"cold": [], "warm": []}
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        for _ in range(args.repeat):
            with tempfile.TemporaryDirectory(prefix="radorbit-numba-") as cache:
                rows["cold"].append(one_start(browser, cache))
                rows["warm"].append(one_start(browser, cache))
        browser.close()
    print(f"radorbit lab start-up, {args.repeat} repeats (median [min-max] s from process launch)")
    print(f"{'numba cache':12} {'HTTP 200':>18} {'interactive page':>18} {'first run shown':>18}")
    for mode, samples in rows.items():
        cells = []
        for column in zip(*samples):
            cells.append(f"{statistics.median(column):5.1f} [{min(column):.1f}-{max(column):.1f}]")
        print(f"{mode:12} " + " ".join(f"{c:>18}" for c in cells))
    print(f"load average: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
