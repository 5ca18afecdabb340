"""Long work of the lab off the page's event loop: one ``Job`` per task, one queue per process.

A ``Job`` runs ``work(progress, cancel)`` once on a daemon thread and keeps its outcome,
its last progress fraction and a one-line error. Jobs start through the process-wide
``RUN_QUEUE``: at most ``slots`` run at once (by default one per CPU core available to
the process), the rest wait in line and know their place, so the server keeps CPU time
for pages while several sessions compute. Nothing here touches Panel: the page reads a
job's state from its own event loop (``ui.session.SessionLink``).
"""

from __future__ import annotations

import os
import threading
import time
from collections import deque
from collections.abc import Callable

from tracker import ScenarioError


def available_cores() -> int:
    """CPU cores this process may run on (at least 1)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


class Job:
    """One task on a worker thread, with progress, cancel and a place in a queue.

    Parameters
    ----------
    work : callable(progress, cancel) -> object
        ``progress(fraction)`` reports 0..1; ``cancel`` is a ``threading.Event`` to check.
    name : str
        Thread name (shown in debuggers).
    failure : str
        Start of the message when ``work`` raises something other than ``ScenarioError``.

    Attributes
    ----------
    outcome : object or None
        What ``work`` returned, once done.
    error : str
        One line when ``work`` raised ('' otherwise); never a traceback.
    """

    def __init__(self, work: Callable, name: str = "radorbit-lab-job", failure: str = "failed"):
        self.work = work
        self.name = name
        self.failure = failure
        self.outcome = None
        self.error = ""
        self.queued_at = None
        self.started_at = None
        self.finished_at = None
        self.queue = None
        self._fraction = 0.0
        self._reported = False
        self._cancel = threading.Event()
        self._done = threading.Event()
        self._thread = None

    # ------------------------------------------------------------------ control
    def start(self, queue: RunQueue | None = None) -> Job:
        """Queue the job (``RUN_QUEUE`` by default); it starts when a slot is free."""
        if self.queued_at is not None:
            raise RuntimeError("a Job runs once; make a new one for the next run")
        self.queued_at = time.perf_counter()
        self.queue = queue if queue is not None else RUN_QUEUE
        self.queue.submit(self)
        return self

    def cancel(self) -> None:
        """Stop: a waiting job leaves the queue at once, a running one at its next check."""
        self._cancel.set()
        if self.queue is not None and self.started_at is None and self.queue.withdraw(self):
            self.finished_at = time.perf_counter()
            self._done.set()

    def wait(self, timeout: float | None = None) -> bool:
        """Block until the job is over; True when it is."""
        return self._done.wait(timeout)

    # ------------------------------------------------------------------ status
    @property
    def done(self) -> bool:
        return self._done.is_set()

    @property
    def started(self) -> bool:
        return self.started_at is not None

    @property
    def cancel_requested(self) -> bool:
        return self._cancel.is_set()

    @property
    def position(self) -> int:
        """Place in the queue (1 = next to start); 0 once started or when not queued."""
        if self.queue is None or self.started_at is not None or self.done:
            return 0
        return self.queue.position(self)

    @property
    def fraction(self) -> float:
        """Fraction of the work done, 0..1."""
        return self._fraction

    @property
    def reported(self) -> bool:
        """True once the work has reported progress."""
        return self._reported

    @property
    def elapsed(self) -> float:
        """Wall time in s since the job started (up to its end once done; 0 while waiting)."""
        if self.started_at is None:
            return 0.0
        end = self.finished_at if self.finished_at is not None else time.perf_counter()
        return end - self.started_at

    # ------------------------------------------------------------------ worker
    def _launch(self) -> None:
        self.started_at = time.perf_counter()
        self._thread = threading.Thread(target=self._run, name=self.name, daemon=True)
        self._thread.start()

    def _progress(self, fraction: float) -> None:
        self._fraction = float(fraction)
        self._reported = True

    def _run(self) -> None:
        try:
            self.outcome = self.work(self._progress, self._cancel)
        except ScenarioError as exc:
            self.error = str(exc)
        except Exception as exc:  # the page shows one line and keeps working
            self.error = f"{self.failure}: {type(exc).__name__}: {exc}"
        finally:
            self.finished_at = time.perf_counter()
            self._done.set()
            if self.queue is not None:
                self.queue.finished(self)


class RunQueue:
    """At most ``slots`` jobs at once; the others start in order as slots free up."""

    def __init__(self, slots: int | None = None):
        self.slots = slots or available_cores()
        self._lock = threading.Lock()
        self._waiting: deque[Job] = deque()
        self._running: set[Job] = set()

    def submit(self, job: Job) -> None:
        with self._lock:
            if len(self._running) < self.slots:
                self._running.add(job)
                launch = True
            else:
                self._waiting.append(job)
                launch = False
        if launch:
            job._launch()

    def withdraw(self, job: Job) -> bool:
        """Take a waiting job out of line; False when it already started."""
        with self._lock:
            try:
                self._waiting.remove(job)
            except ValueError:
                return False
            return True

    def finished(self, job: Job) -> None:
        with self._lock:
            self._running.discard(job)
            starting = []
            while self._waiting and len(self._running) < self.slots:
                nxt = self._waiting.popleft()
                self._running.add(nxt)
                starting.append(nxt)
        for nxt in starting:
            nxt._launch()

    def position(self, job: Job) -> int:
        with self._lock:
            try:
                return self._waiting.index(job) + 1
            except ValueError:
                return 0

    def resize(self, slots: int) -> None:
        """Allow ``slots`` jobs at once from now on (waiting jobs start if slots grew)."""
        with self._lock:
            self.slots = max(1, int(slots))
            starting = []
            while self._waiting and len(self._running) < self.slots:
                nxt = self._waiting.popleft()
                self._running.add(nxt)
                starting.append(nxt)
        for nxt in starting:
            nxt._launch()

    def jobs(self) -> list[Job]:
        """Every job running or waiting, running ones first."""
        with self._lock:
            return [*self._running, *self._waiting]

    @property
    def running(self) -> int:
        with self._lock:
            return len(self._running)

    @property
    def waiting(self) -> int:
        with self._lock:
            return len(self._waiting)


#: the lab's queue: engine runs and spectra of every session in this process
RUN_QUEUE = RunQueue()
