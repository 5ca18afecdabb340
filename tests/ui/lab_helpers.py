"""Helpers shared by the lab tests and the cold-start measurement (no fixtures here)."""

import socket
import subprocess
import time
import urllib.request
from pathlib import Path

CHROMIUM = "/usr/bin/chromium"
#: launch flags checked on CI's Debian image (see the UI stack notes)
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync"]
ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = ROOT / "test-artifacts"
SKIP_HINT = "browser tests need Debian's Chromium at /usr/bin/chromium: apt-get install chromium"


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def wait_for_http(url, timeout=120.0, process=None):
    """Poll ``url`` until it answers 200; raise after ``timeout`` s."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if process is not None and process.poll() is not None:
            raise RuntimeError(f"server exited with status {process.returncode}")
        try:
            # one patient request rather than many short ones: on a busy machine a page takes seconds
            with urllib.request.urlopen(url, timeout=max(1.0, deadline - time.monotonic())) as response:
                if response.status == 200:
                    return
        except OSError:
            pass
        time.sleep(0.1)
    raise TimeoutError(f"{url} did not answer within {timeout} s")


def stop_server(process, timeout=10.0):
    """Terminate a served lab; kill it if it has not exited after ``timeout`` s."""
    process.terminate()
    try:
        process.wait(timeout)
    except subprocess.TimeoutExpired:
        process.kill()
