"""Fixtures of the lab tests: Debian's Chromium for Playwright, a lab server on a free loopback port.

Browser tests are marked ``@pytest.mark.browser``; without /usr/bin/chromium they are
skipped with the install hint. Playwright's own browser downloads are never used.
"""

import os

import pytest
from lab_helpers import ARTIFACTS, CHROMIUM, CHROMIUM_ARGS, SKIP_HINT, free_port, wait_for_http

os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

#: how long a browser test waits for a condition: patient, because the suite must pass on a busy
#: shared machine (it returns as soon as the condition holds; nothing sleeps for a fixed time)
CONDITION_TIMEOUT_MS = 60_000


@pytest.fixture(autouse=True)
def _patient_conditions(request):
    if "browser" in request.keywords:
        from playwright.sync_api import expect

        expect.set_options(timeout=CONDITION_TIMEOUT_MS)
        if "page" in request.fixturenames:
            request.getfixturevalue("page").set_default_timeout(CONDITION_TIMEOUT_MS)
    yield


def chromium_available():
    return os.path.exists(CHROMIUM)


def pytest_collection_modifyitems(config, items):
    reason = None
    if not chromium_available():
        reason = SKIP_HINT
    else:
        try:
            import playwright.sync_api  # noqa: F401
        except ImportError:
            reason = "browser tests need Playwright: pip install -e '.[test]' (and apt-get install chromium)"
    if reason is None:
        return
    skip = pytest.mark.skip(reason=reason)
    for item in items:
        if "browser" in item.keywords:
            item.add_marker(skip)


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args):
    """Drive Debian's Chromium (pytest-playwright has no option for an executable path)."""
    return {**browser_type_launch_args, "executable_path": CHROMIUM, "args": CHROMIUM_ARGS}


@pytest.fixture(scope="session")
def browser_context_args(browser_context_args):
    return {**browser_context_args, "viewport": {"width": 1600, "height": 1000}}


@pytest.fixture(scope="module")
def lab_url():
    """The lab served in this process (``pn.serve(threaded=True)``) on a free loopback port."""
    from ui.app import create_app
    from ui.server import LabServer

    server = LabServer(create_app, port=free_port(), path="/lab").start()
    try:
        wait_for_http(server.url)
        yield server.url
    finally:
        server.stop()


@pytest.fixture(scope="session")
def artifacts():
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS
