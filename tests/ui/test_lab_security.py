"""The lab answers only to allowed host names (DNS rebinding) and allowed websocket origins.

Requests are made with forged ``Host`` and ``Origin`` headers, as a page on another site
would send them after making its own name resolve to 127.0.0.1.
"""

import asyncio
import http.client
from concurrent.futures import ThreadPoolExecutor

import pytest
from tornado.httpclient import HTTPClientError, HTTPRequest
from tornado.websocket import websocket_connect

from lab_helpers import free_port, wait_for_http
from ui.server import LabServer, allowed_hosts, normal_host


@pytest.fixture(scope="module")
def served():
    from ui.app import create_app

    server = LabServer(create_app, port=free_port(), allow_hosts=["lab.example"]).start()
    try:
        wait_for_http(server.url)
        yield server
    finally:
        server.stop()


def get(server, path, host):
    conn = http.client.HTTPConnection("127.0.0.1", server.port, timeout=30)
    try:
        conn.request("GET", path, headers={"Host": host})
        response = conn.getresponse()
        return response.status, response.read()
    finally:
        conn.close()


def websocket_status(server, host, origin):
    """HTTP status of a websocket handshake to /ws with these headers (101 when it opened)."""

    async def attempt():
        request = HTTPRequest(f"ws://127.0.0.1:{server.port}/ws", headers={"Host": host, "Origin": origin},
                              request_timeout=30)
        try:
            connection = await websocket_connect(request, subprotocols=["bokeh", "no-token"])
        except HTTPClientError as exc:
            return exc.code
        connection.close()
        return 101

    # on a thread of its own: the browser tests may leave an event loop running in this one
    with ThreadPoolExecutor(1) as pool:
        return pool.submit(asyncio.run, attempt()).result()


def test_host_names_are_normalised():
    assert normal_host("[::1]:5006") == "::1"
    assert normal_host("LocalHost:80") == "localhost"
    assert normal_host("evil.example") == "evil.example"
    assert {"127.0.0.1", "localhost", "::1"} <= allowed_hosts("127.0.0.1")
    assert "10.1.2.3" in allowed_hosts("10.1.2.3")
    assert "evil.example" not in allowed_hosts("0.0.0.0")


@pytest.mark.parametrize("path", ["/", "/static/js/bokeh.min.js", "/favicon.ico", "/no-such-page"])
def test_every_http_request_with_a_foreign_host_is_refused(served, path):
    status, body = get(served, path, f"evil.example:{served.port}")
    assert status == 403
    assert b"host name is not allowed" in body


@pytest.mark.parametrize("host", ["127.0.0.1", "localhost", "[::1]", "lab.example"])
def test_allowed_host_names_get_the_page(served, host):
    status, body = get(served, "/", f"{host}:{served.port}")
    assert status == 200
    assert b"radorbit lab" in body


def test_dns_rebinding_websocket_is_refused(served):
    # the web server library accepts an Origin equal to Host; the host check refuses it first
    port = served.port
    assert websocket_status(served, f"evil.example:{port}", f"http://evil.example:{port}") == 403


def test_websocket_from_a_foreign_origin_is_refused(served):
    port = served.port
    assert websocket_status(served, f"127.0.0.1:{port}", f"http://evil.example:{port}") == 403
    assert websocket_status(served, f"127.0.0.1:{port}", "http://127.0.0.1:1") == 403


def test_websocket_from_the_lab_itself_passes_the_checks(served):
    # control: the same handshake with the lab's own host and origin is not refused by either check
    port = served.port
    assert websocket_status(served, f"127.0.0.1:{port}", f"http://127.0.0.1:{port}") != 403
