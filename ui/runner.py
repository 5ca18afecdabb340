"""One engine run of the lab: ``tracker.compare`` as a queued ``Job`` (no Panel here).

The engine's kernels release the GIL and report progress between chunks of steps,
checking a cancel flag there (``tracker.track``/``tracker.compare``). The controller
runs that call through the lab's queue (``ui.work.RUN_QUEUE``), then prepares the
drawing data on the same worker thread, so the page's event loop only assigns it.
"""

from __future__ import annotations

from collections.abc import Callable

import tracker

from .work import Job, RunQueue


class RunController(Job):
    """Run ``job(scenario, progress=, cancel=)`` once, queued, on a daemon thread.

    Parameters
    ----------
    scenario : tracker.Scenario
    job : callable, optional
        ``tracker.compare`` (default) or ``tracker.track``.
    prepare : callable(outcome) -> object, optional
        Run on the worker thread after the job, e.g. to thin arrays for drawing.

    Attributes
    ----------
    outcome : object or None
        What ``job`` returned (a Comparison for ``compare``), once done.
    prepared : object or None
        What ``prepare`` returned.
    error : str
        One-line message when the run failed ('' otherwise); never a traceback.
    """

    def __init__(self, scenario, job: Callable | None = None, prepare: Callable | None = None):
        super().__init__(self._compute, name="radorbit-lab-run", failure="the run failed")
        self.scenario = scenario
        self.job = job or tracker.compare
        self.prepare = prepare
        self.prepared = None

    def start(self, queue: RunQueue | None = None) -> RunController:
        super().start(queue)
        return self

    def _compute(self, progress, cancel):
        outcome = self.job(self.scenario, progress=progress, cancel=cancel)
        if self.prepare is not None:
            self.prepared = self.prepare(outcome)
        return outcome
