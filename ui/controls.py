"""Run and cancel buttons, progress bar, validity and status lines of one session.

The engine runs on a queued worker thread (``LabState.start_run``). The session's
``SessionLink`` polls it on the session's own event loop and copies progress and, at
the end, the results into the state, so every document change happens on the loop.
"""

import html

import panel as pn
from panel.viewable import Viewer

from .session import SessionLink
from .theme import checkbox, html_pane
from .views.palette import MODEL_LABELS, MODEL_STYLES
from tracker.engine import MODEL_ORDER

#: what the model ticks mean, said once under them
MODELS_NOTE = ('<div class="ro-note" id="models-note">Each ticked model runs the same scenario; its colour is '
               "the same in every plot and table. Stochastic emission also records its photons (Photons tab)."
               "</div>")

STATUS_COLORS = {"idle": "#52606d", "queued": "#6b4f9a", "running": "#1d5f8a", "completed": "#1e6b3a", "cancelled": "#8a4b00",
                 "stopped": "#8a4b00", "failed": "#b3261e"}


def validity_html(state):
    """One line: the scenario is valid (with its step count), or every message found."""
    if state.scenario is None:
        messages = list(state.errors.values()) or [state.error]
        head = f"✗ {len(messages)} problems: " if len(messages) > 1 else "✗ "
        body = "<br>".join(html.escape(m) for m in messages)
        return (f'<div class="ro-invalid" id="scenario-error" data-count="{len(messages)}" '
                f'style="color:#b3261e;font-size:13px;overflow-wrap:anywhere">{head}{body}</div>')
    steps = state.plan.steps if state.plan is not None else 0
    if not state.models:
        return ('<div class="ro-invalid" id="no-model" style="color:#b3261e;font-size:13px">'
                "✗ tick at least one radiation-reaction model to run.</div>")
    problem = state.memory_problem()
    if problem:
        return ('<div class="ro-invalid" id="memory-refused" style="color:#b3261e;font-size:13px;'
                f'overflow-wrap:anywhere">✗ {html.escape(problem)}</div>')
    count = len(state.models)
    return (f'<div class="ro-valid" id="scenario-ok" style="color:#1e6b3a;font-size:13px">'
            f"✓ scenario valid · {steps:,} steps per run · {count} model{'s' if count > 1 else ''}</div>")


def can_start(state):
    """True when the Run button may start a run: a valid scenario, ticked models that fit together."""
    return state.scenario is not None and not state.running and bool(state.models) and not state.memory_problem()


def status_html(state):
    color = STATUS_COLORS.get(state.status, "#52606d")
    text = state.status_text or "not run yet"
    return (f'<div id="run-status" data-status="{state.status}" data-runs="{state.run_count}" '
            f'style="color:{color};font-size:13px;overflow-wrap:anywhere">{html.escape(text)}</div>')


def model_tick(model, value):
    """A tick for one model, its box drawn in the model's fixed colour."""
    color = MODEL_STYLES[model]["color"]
    css = (f".bk-label::before {{ border-color: {color}; }}\n"
           f"input:checked + .bk-label::before {{ background: {color}; border-color: {color}; }}")
    return checkbox(MODEL_LABELS[model], value=value, stylesheets=[css], margin=(2, 8),
                    css_classes=["model-tick", f"model-{model}"])


class RunControls(Viewer):
    """Model ticks, Run / Cancel, a progress bar and the status line."""

    def __init__(self, state, link=None, on_finished=None, on_started=None, **params):
        super().__init__(**params)
        self.state = state
        self.link = link if link is not None else SessionLink()
        self.on_finished = on_finished
        self.on_started = on_started
        self.run = pn.widgets.Button(label="▶  Run", color="primary", width=150, height=38, margin=(4, 6),
                                     css_classes=["run-button"])
        self.cancel = pn.widgets.Button(label="■  Cancel", width=110, height=38, margin=(4, 6), disabled=True,
                                        css_classes=["cancel-button"])
        self.progress = pn.indicators.Progress(value=0, max=1000, bar_color="primary", active=False,
                                               sizing_mode="stretch_width", height=14, margin=(6, 8))
        self.validity = html_pane(validity_html(state), sizing_mode="stretch_width", margin=(0, 8))
        self.status = html_pane(status_html(state), sizing_mode="stretch_width", margin=(0, 8))
        self._syncing = False
        self.model_ticks = {model: model_tick(model, model in state.models) for model in MODEL_ORDER}
        for model, tick in self.model_ticks.items():
            tick.param.watch(self._ticked, "value")
        state.param.watch(self._models_changed, "models")
        self.run.on_click(self._run_clicked)
        self.cancel.on_click(self._cancel_clicked)
        state.param.watch(self._validity_changed, ["scenario", "error", "errors", "models"])
        state.param.watch(self._status_changed, ["status", "status_text", "progress"])
        ticks = pn.GridBox(*self.model_ticks.values(), ncols=2, sizing_mode="stretch_width", margin=(0, 0, 2, 0))
        self._layout = pn.Column(html_pane('<div class="ro-section">Radiation-reaction models</div>', margin=(0, 8)),
                                 ticks, html_pane(MODELS_NOTE, sizing_mode="stretch_width", margin=(0, 8)),
                                 pn.Row(self.run, self.cancel, margin=0), self.progress, self.status,
                                 self.validity, sizing_mode="stretch_width", margin=0)
        self._validity_changed()

    def __panel__(self):
        return self._layout

    def _validity_changed(self, *_):
        self.validity.object = validity_html(self.state)
        self.run.disabled = not can_start(self.state)

    def _ticked(self, _event):
        if not self._syncing:
            self.state.set_models([model for model, tick in self.model_ticks.items() if tick.value])

    def _models_changed(self, *_):
        # the state changed the ticks (a scenario loaded, the form's model changed): mirror them
        # without each box's change writing a half-updated list back
        self._syncing = True
        try:
            for model, tick in self.model_ticks.items():
                tick.value = model in self.state.models
        finally:
            self._syncing = False

    def _status_changed(self, *_):
        state = self.state
        running = state.status in ("running", "queued")
        self.status.object = status_html(state)
        if state.status == "running" and not (state.controller and state.controller.reported):
            self.progress.param.update(value=-1, active=True)  # indeterminate while kernels load
        else:
            self.progress.param.update(value=int(round(1000 * state.progress)), active=running)
        self.cancel.disabled = not running
        self.run.disabled = running or not can_start(state)

    def _run_clicked(self, _event):
        self.start()

    def start(self):
        """Start a run as the Run button does; False when the scenario is invalid or one is going."""
        if not self.state.start_run():
            return False
        self.run.disabled = True
        self.cancel.disabled = False
        self._status_changed()
        controller = self.state.controller
        if self.on_started is not None:
            self.on_started()
        # a run replaced by a newly opened scenario is over for this page
        self.link.watch(lambda: self.state.controller is not controller or self.state.poll(), self._finished)
        return True

    def _cancel_clicked(self, _event):
        self.state.cancel_run()

    def _finished(self):
        self._status_changed()
        if self.on_finished is not None:
            self.on_finished()
