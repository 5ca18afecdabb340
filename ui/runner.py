"""One engine run on a worker thread, with progress and cancel (no Panel here).

The engine's kernels release the GIL and report progress between chunks of steps,
checking a cancel flag there (``tracker.track``/``tracker.compare``). The controller
only starts that call on a thread, keeps the latest progress fraction and the
outcome, and sets the cancel flag when asked. The page polls it from its own event
loop, so every document change happens on the loop.
"""

import threading
import time

import tracker
from tracker import ScenarioError


class RunController:
    """Run ``job(scenario, progress=, cancel=)`` once on a daemon thread.

    Parameters
    ----------
    scenario : tracker.Scenario
    job : callable, optional
        ``tracker.compare`` (default) or ``tracker.track``.
    prepare : callable(outcome) -> object, optional
        Run on the worker thread after the job, e.g. to decimate arrays for drawing,
        so the page's event loop only assigns prepared data.

    Attributes
    ----------
    outcome : object or None
        What ``job`` returned (a Comparison for ``compare``), once done.
    prepared : object or None
        What ``prepare`` returned.
    error : str
        One-line message when the job failed ('' otherwise); never a traceback.
    """

    def __init__(self, scenario, job=None, prepare=None):
        self.scenario = scenario
        self.job = job or tracker.compare
        self.prepare = prepare
        self.outcome = None
        self.prepared = None
        self.error = ""
        self.started_at = None
        self.finished_at = None
        self._fraction = 0.0
        self._reported = False
        self._cancel = threading.Event()
        self._done = threading.Event()
        self._thread = None

    # ------------------------------------------------------------------ control
    def start(self):
        """Start the worker thread (once)."""
        if self._thread is not None:
            raise RuntimeError("a RunController runs once; make a new one for the next run")
        self.started_at = time.perf_counter()
        self._thread = threading.Thread(target=self._work, name="radorbit-lab-run", daemon=True)
        self._thread.start()
        return self

    def cancel(self):
        """Ask the engine to stop at its next chunk boundary (it keeps what it computed)."""
        self._cancel.set()

    def wait(self, timeout=None):
        """Block until the run is over; True when it is."""
        return self._done.wait(timeout)

    # ------------------------------------------------------------------ status
    @property
    def done(self):
        return self._done.is_set()

    @property
    def cancel_requested(self):
        return self._cancel.is_set()

    @property
    def fraction(self):
        """Fraction of the planned steps done, 0..1 (the mean of the two runs of a comparison)."""
        return self._fraction

    @property
    def reported(self):
        """True once the engine has reported progress (before that it may be loading kernels)."""
        return self._reported

    @property
    def elapsed(self):
        """Wall time since start in s (up to the end once done)."""
        if self.started_at is None:
            return 0.0
        end = self.finished_at if self.finished_at is not None else time.perf_counter()
        return end - self.started_at

    # ------------------------------------------------------------------ worker
    def _progress(self, fraction):
        self._fraction = float(fraction)
        self._reported = True

    def _work(self):
        try:
            self.outcome = self.job(self.scenario, progress=self._progress, cancel=self._cancel)
            if self.prepare is not None:
                self.prepared = self.prepare(self.outcome)
        except ScenarioError as exc:
            self.error = str(exc)
        except Exception as exc:  # the page shows one line and keeps working
            self.error = f"the run failed: {type(exc).__name__}: {exc}"
        finally:
            self.finished_at = time.perf_counter()
            self._done.set()
