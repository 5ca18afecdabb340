"""The lab under load, in Debian's Chromium: page latency, tab close to cancel, Run to plots.

    OMP_WAIT_POLICY=PASSIVE python benchmarks/bench_lab.py [--repeat 3]

Serves the lab in this process (``ui.server.LabServer``) and measures

1. ``GET /`` latency with no run going, then with four sessions' runs going at once
   (goal: median < 300 ms, max < 1 s), and a static file under the same load;
2. the time from closing a tab to its run being cancelled (goal < 2 s), read from the
   run's own controller;
3. Run pressed -> last plot drawn, per bundled scenario, beside the run's compute time
   shown on the page (goal: plots within 1.5 s of the run's end).

Prints median [min-max] of ``--repeat`` repetitions and the load average. Absolute numbers
on a shared machine move with what else runs: quote them with the load.
"""

import argparse
import os
import re
import statistics
import sys
import time
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT), str(ROOT / "tests" / "ui")]
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

from lab_helpers import CHROMIUM, CHROMIUM_ARGS, free_port, wait_for_http  # noqa: E402

LONG = {"duration": "7 ms", "save_every": "100000"}


def get_ms(url, timeout=180):
    start = time.perf_counter()
    with urllib.request.urlopen(url, timeout=timeout) as response:
        response.read()
    return 1e3 * (time.perf_counter() - start)


def summary(values, unit="ms"):
    return f"median {statistics.median(values):.0f} {unit}, max {max(values):.0f} {unit} (n = {len(values)})"


def open_page(context, url):
    from playwright.sync_api import expect

    page = context.new_page()
    page.goto(url)
    expect(page.locator(".run-button button")).to_be_enabled(timeout=120_000)
    return page


def type_into(page, css, text):
    box = page.locator(f"{css} input")
    box.fill(text)
    box.press("Enter")


def open_bundled(page, name):
    from playwright.sync_api import expect

    from ui.bundled import bundled_scenarios

    loads = int(page.locator("#source-name").get_attribute("data-loads"))
    page.locator(".bundled-select select").select_option(label=f"{bundled_scenarios()[name]} ({name})")
    page.locator(".open-bundled button").click()
    expect(page.locator(f'#source-name[data-loads="{loads + 1}"]')).to_be_visible(timeout=60_000)


def start_long_run(page):
    from playwright.sync_api import expect

    open_bundled(page, "storage_ring_bend.toml")
    for key, value in LONG.items():
        type_into(page, f".in-run-{key}", value)
    expect(page.locator("#plan-steps")).to_have_text(re.compile(r"^\d{2},\d{3},\d{3}$"), timeout=60_000)
    page.locator(".run-button button").click()
    expect(page.locator('#run-status[data-status="running"], #run-status[data-status="queued"]')).to_be_visible(
        timeout=60_000)


#: the page's figures hold data: the summary, the four time series and an orbit path of each run
PLOTS_DRAWN = """() => {
    let series = 0, paths = 0;
    for (const d of Bokeh.documents) for (const m of d.all_models) {
        if (m.data && m.data.gamma && m.data.gamma.length > 1) series++;
        if (m.data && m.data.h && m.data.h.length > 1) paths++;
    }
    return series >= 2 && paths >= 2;
}"""


def run_to_plots(page, name):
    """(s from Run pressed to every plot drawn, compute s shown on the page)."""
    from playwright.sync_api import expect

    open_bundled(page, name)
    runs = int(page.locator("#run-status").get_attribute("data-runs"))
    page.locator(".run-button button").click()
    t0 = time.perf_counter()
    expect(page.locator(f'#run-status[data-runs="{runs + 1}"]')).to_be_visible(timeout=300_000)
    expect(page.locator("#sum-energy_radiated-damped")).to_be_visible(timeout=300_000)
    page.wait_for_function(PLOTS_DRAWN, timeout=300_000)
    page.evaluate("() => new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)))")
    total = time.perf_counter() - t0
    text = page.locator("#run-status").inner_text()
    match = re.search(r"in ([0-9.]+) s", text)
    return total, float(match.group(1)) if match else float("nan")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--scenarios", default="storage_ring_bend.toml,undulator_1gev.toml")
    args = parser.parse_args()
    from playwright.sync_api import sync_playwright

    from ui.app import create_app
    from ui.server import LabServer
    from ui.work import RUN_QUEUE

    server = LabServer(create_app, port=free_port()).start()
    url = server.url
    wait_for_http(url, timeout=120)
    static = url + "static/js/bokeh.min.js"
    try:
        with sync_playwright() as pw:
            browser = pw.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
            # warm the kernels and the page once (cold-start numbers are in the README's start-up table)
            warm = open_page(browser.new_context(viewport={"width": 1600, "height": 1000}), url)
            run_to_plots(warm, "storage_ring_bend.toml")

            idle = [get_ms(url) for _ in range(10 * args.repeat)]
            print(f"GET / idle: {summary(idle)}", flush=True)

            contexts = [browser.new_context(viewport={"width": 1400, "height": 900}) for _ in range(4)]
            pages = [open_page(c, url) for c in contexts]
            for page in pages:
                start_long_run(page)
            print(f"four runs pressed: {RUN_QUEUE.running} running, {RUN_QUEUE.waiting} queued "
                  f"({RUN_QUEUE.slots} slots)", flush=True)
            loaded = [get_ms(url) for _ in range(10 * args.repeat)]
            files = [get_ms(static) for _ in range(3 * args.repeat)]
            print(f"GET / with four runs: {summary(loaded)}", flush=True)
            print(f"static file with four runs: {summary(files)}", flush=True)

            closes = []
            for context in contexts:
                before = RUN_QUEUE.jobs()
                t0 = time.perf_counter()
                context.close()
                while time.perf_counter() < t0 + 60 and not any(job.done for job in before):
                    time.sleep(0.01)
                ended = [job.finished_at for job in before if job.done]
                closes.append(min(ended) - t0 if ended else float("inf"))
            print(f"tab closed -> its run cancelled: {summary([1e3 * c for c in closes])}", flush=True)

            page = open_page(browser.new_context(viewport={"width": 1600, "height": 1000}), url)
            for name in args.scenarios.split(","):
                rows = [run_to_plots(page, name) for _ in range(args.repeat)]
                total = [r[0] for r in rows]
                after = [r[0] - r[1] for r in rows]
                print(f"{name}: Run -> last plot {statistics.median(total):.2f} s [{min(total):.2f}-{max(total):.2f}]"
                      f"; compute {statistics.median([r[1] for r in rows]):.2f} s; plots after the run's end "
                      f"{statistics.median(after):.2f} s [{min(after):.2f}-{max(after):.2f}]", flush=True)
            browser.close()
    finally:
        server.stop()
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")


if __name__ == "__main__":
    main()
