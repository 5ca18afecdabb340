"""The one way work comes back to a page: a periodic poll on the session's own event loop.

Worker threads (``ui.work.Job``) never touch the document. While a session has work
pending, ``SessionLink`` polls it every ``POLL_MS`` on the session's event loop (under
the document lock), hands progress and outcomes to the views there, and watches the
browser connection: when the session's last browser tab is gone, its work is cancelled
within two polls, instead of running on until Bokeh drops the session much later.
Outside a server (tests, scripts) nothing is scheduled: call ``poll`` yourself.
"""

from __future__ import annotations

from collections.abc import Callable

import panel as pn
from bokeh.document import Document

#: how often a page asks its pending work for news, ms
POLL_MS = 150

#: polls in a row without a browser connection before the session's work is cancelled
ABSENT_POLLS = 2


def browser_connected(doc) -> bool | None:
    """Whether a browser tab holds a connection to ``doc``'s session (None outside a server)."""
    context = getattr(doc, "session_context", None)
    server = getattr(context, "server_context", None)
    if context is None or server is None:
        return None
    for session in server.sessions:
        if session.id == context.id:
            return session.connection_count > 0
    return False


class SessionLink:
    """Polls a session's pending work on its event loop; cancels it when the tab is closed.

    ``watch(poll, finished)``: ``poll()`` is called every ``POLL_MS`` and returns True once
    its work is over, then ``finished()`` runs once. ``on_gone(cancel)`` registers what
    to call when the browser has gone away.
    """

    def __init__(self, doc=None):
        self.doc = doc if doc is not None else pn.state.curdoc
        self._watched: list[tuple[Callable[[], bool], Callable[[], None] | None]] = []
        self._cancellers: list[Callable[[], None]] = []
        self._callback = None
        self._absent = 0
        self.gone = False

    def on_gone(self, cancel: Callable[[], None]) -> None:
        """Call ``cancel()`` when the session's browser tab has closed."""
        self._cancellers.append(cancel)

    def watch(self, poll: Callable[[], bool], finished: Callable[[], None] | None = None) -> None:
        """Poll ``poll`` until it returns True, then call ``finished``."""
        self._watched.append((poll, finished))
        if self._callback is None and isinstance(self.doc, Document) and self.doc.session_context is not None:
            self._callback = pn.state.add_periodic_callback(self.poll, period=POLL_MS)

    @property
    def pending(self) -> int:
        return len(self._watched)

    def poll(self) -> None:
        """One round: news from every pending task, then the browser check."""
        done = [entry for entry in list(self._watched) if entry[0]()]
        self._watched = [entry for entry in self._watched if entry not in done]
        for _poll, finished in done:
            if finished is not None:
                finished()
        self._check_browser()
        if not self._watched and self._callback is not None:
            self._callback.stop()
            self._callback = None

    def _check_browser(self) -> None:
        if browser_connected(self.doc) is False:
            self._absent += 1
        else:
            self._absent = 0
        if self._absent >= ABSENT_POLLS and not self.gone:
            self.cancel_all()

    def cancel_all(self) -> None:
        """Cancel the session's work (its tab closed, or the session ends)."""
        self.gone = True
        for cancel in self._cancellers:
            cancel()
