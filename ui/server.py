"""Serving the lab: which host names may reach it, and the server that enforces that.

The lab has no login, so it trusts the network it is bound to. A hostile web page can
still reach a loopback server through the visitor's browser by DNS rebinding (its own
name made to resolve to 127.0.0.1); such requests carry the attacker's name in the
``Host`` header. Every HTTP and websocket request whose ``Host`` is not an allowed name
is therefore refused (403) before any handler runs, and the websocket additionally
requires an allowed ``Origin`` (Bokeh's allowlist).

Allowed names: the loopback names, the bind address, and what ``--allow-host`` adds;
binding every interface (``0.0.0.0``) also allows this machine's host names.
"""

from __future__ import annotations

import socket
import threading
from collections.abc import Callable, Iterable

import panel as pn
from tornado.ioloop import IOLoop
from tornado.routing import Matcher, Rule
from tornado.web import RequestHandler

#: names that always mean this machine
LOOPBACK_NAMES = frozenset({"127.0.0.1", "localhost", "::1"})

#: a session whose last browser connection closed is dropped after this long (ms); its run was
#: already cancelled by the session's own watch (ui.session). Bokeh's default is 15 s.
UNUSED_SESSION_LIFETIME_MS = 5_000
#: how often the server looks for such sessions (ms)
CHECK_UNUSED_SESSIONS_MS = 1_000


def normal_host(name: str) -> str:
    """Lower-case host name without port or IPv6 brackets: '[::1]:5006' -> '::1'."""
    name = name.strip().lower()
    if name.startswith("["):
        return name[1:].split("]", 1)[0]
    if name.count(":") == 1:
        name = name.split(":", 1)[0]
    return name


def allowed_hosts(address: str, extra: Iterable[str] = ()) -> frozenset[str]:
    """Host names the lab answers to when bound to ``address`` (plus ``extra`` names)."""
    hosts = set(LOOPBACK_NAMES)
    if address in ("0.0.0.0", "::", ""):
        hosts |= {socket.gethostname(), socket.getfqdn()}
    elif address:
        hosts.add(address)
    hosts |= {h for h in extra if h}
    return frozenset(normal_host(h) for h in hosts if normal_host(h))


def websocket_origins(hosts: Iterable[str], port: int) -> list[str]:
    """``host:port`` origins allowed to open the lab's websocket (IPv6 hosts in brackets)."""
    return sorted(f"[{h}]:{port}" if ":" in h else f"{h}:{port}" for h in hosts)


class ForeignHost(Matcher):
    """Matches requests whose ``Host`` header names none of the allowed hosts."""

    def __init__(self, hosts: Iterable[str]):
        self.hosts = frozenset(hosts)

    def match(self, request):
        host = normal_host(request.host or "")
        return None if host in self.hosts else {}


class RefusedHost(RequestHandler):
    """403 for every method: the request was addressed to a name the lab does not answer to."""

    def prepare(self):
        self.set_status(403)
        self.set_header("Content-Type", "text/plain; charset=utf-8")
        self.finish("radorbit lab: this host name is not allowed (start the lab with --allow-host NAME to add it)\n")


def guard_hosts(tornado_app, hosts: Iterable[str]) -> None:
    """Refuse every request to ``tornado_app`` whose Host is not in ``hosts``, before any route."""
    tornado_app.default_router.rules.insert(0, Rule(ForeignHost(hosts), RefusedHost))


class LabServer:
    """One lab server: a session per browser tab, host names checked on every request.

    Parameters
    ----------
    app : callable() -> viewable
        Builds one session's page.
    port : int
        0 picks a free port (read ``port`` after ``start``).
    address : str
        Address to bind (loopback by default: the lab has no authentication).
    allow_hosts : iterable of str
        Host names to answer to besides the loopback names and ``address``.
    path : str
        URL path of the lab ('/' for ``radorbit lab``).
    """

    def __init__(self, app: Callable, port: int = 5006, address: str = "127.0.0.1",
                 allow_hosts: Iterable[str] = (), path: str = "/", title: str = "radorbit lab"):
        self.app = app
        self.port = port
        self.address = address
        self.hosts = allowed_hosts(address, allow_hosts)
        self.path = path
        self.title = title
        self.server = None
        self._thread = None
        self._ready = threading.Event()
        self._error = None

    @property
    def url(self) -> str:
        host = "127.0.0.1" if self.address in ("0.0.0.0", "::", "") else self.address
        host = f"[{host}]" if ":" in host else host
        return f"http://{host}:{self.port}{self.path}"

    def _build(self, loop):
        apps = self.app if self.path == "/" else {self.path.strip("/"): self.app}
        server = pn.serve(apps, port=self.port, address=self.address, loop=loop, start=False, show=False,
                          title=self.title, verbose=False, threaded=False,
                          # no URL sync (unused here), and Panel's URL parser fails on IPv6 host names
                          location=False,
                          # Bokeh's parser of this option cannot read IPv6 names: they are added below
                          websocket_origin=[o for o in websocket_origins(self.hosts, self.port or 0)
                                            if not o.startswith("[")],
                          unused_session_lifetime_milliseconds=UNUSED_SESSION_LIFETIME_MS,
                          check_unused_sessions_milliseconds=CHECK_UNUSED_SESSIONS_MS)
        guard_hosts(server._tornado, self.hosts)
        self.port = server.port
        server._tornado.websocket_origins.update(websocket_origins(self.hosts, self.port))
        self.server = server
        return server

    def run(self, show: bool = False) -> None:
        """Serve in this thread until the loop is stopped (Ctrl-C)."""
        server = self._build(None)
        server.start()
        if show:
            server.io_loop.add_callback(server.show, "/")
        server.io_loop.start()

    def start(self) -> LabServer:
        """Serve on a background thread; returns once the server listens."""

        def serve():
            loop = IOLoop(make_current=False)
            try:
                server = self._build(loop)
                server.start()
            except Exception as exc:  # reported to the caller of start()
                self._error = exc
                self._ready.set()
                return
            loop.add_callback(self._ready.set)
            loop.start()

        self._thread = threading.Thread(target=serve, name="radorbit-lab-server", daemon=True)
        self._thread.start()
        self._ready.wait()
        if self._error is not None:
            raise self._error
        return self

    def stop(self, timeout: float = 10.0) -> None:
        """Stop a server started with ``start``."""
        server = self.server
        if server is None:
            return

        def halt():
            server.stop()
            server.io_loop.stop()

        server.io_loop.add_callback(halt)
        if self._thread is not None:
            self._thread.join(timeout)
