"""Run editor: duration, time step, pusher, radiation reaction, output cadence; the live plan
(with a beam's particle count and the memory of every ticked model's run, from ``tracker.plan``)."""

import html

import panel as pn
from panel.viewable import Viewer

from tracker.config import DEFAULT_STEPS_PER_PERIOD
from tracker.fields.base import REQUIRED
from tracker.plan import human_bytes

from .. import schema
from ..format import TIME_UNITS, number_text, quantity_text
from .inputs import ErrorBoard, RowCache
from ..theme import html_pane

#: memory estimate above which the plan line turns amber (common practice, no source)
LARGE_MEMORY_BYTES = 1 << 30


def run_row(cache, name, default):
    """EntryRow (kept across rebuilds by ``cache``) for one [run] input of ``schema.RUN_ENTRIES``."""
    e = schema.RUN_ENTRIES[name]
    return cache.row(("run", name), e.label, e.kind, unit=e.unit, dimension=e.dimension, doc=e.doc,
                     default=default, choices=e.choices)


def plan_html(plan, error="", runs=2, scenario=None, models=None):
    """Plan readout: dt, steps, saved states, a beam's particle count, memory (per run and for
    ``runs`` runs side by side, from ``tracker.plan``), fastest time scale, resolution."""
    if plan is None:
        return ('<div class="ro-plan" id="plan-readout"><i>No plan: the scenario is not valid yet'
                f'{" (see the message above)" if error else ""}.</i></div>')
    from tracker.plan import comparison_memory, memory_limit_bytes

    runs = max(1, runs)
    held, peak = comparison_memory(scenario, plan, runs, models) if scenario is not None else (0, plan.peak_bytes)
    limit = memory_limit_bytes()
    memory_style = (' style="color:#9a5b00;font-weight:600"'
                    if max(plan.memory_bytes, peak) >= min(LARGE_MEMORY_BYTES, limit) else "")
    period = (f"{quantity_text(plan.period, TIME_UNITS)} ({html.escape(plan.period_source)})"
              if plan.period else "none found")
    per_run = f'<span id="plan-memory"{memory_style}>{human_bytes(plan.memory_bytes)}</span> per run'
    beam = scenario is not None and scenario.beam is not None
    if beam:
        save = scenario.run.save
        per_run += (f" with run.save = {html.escape(repr(save))} "
                    f"({'every particle' if save == 'all' else 'statistics only, independent of the count'}; "
                    f"particle state {human_bytes(plan.state_bytes)})")
    side = (f'<span id="plan-memory-total" data-bytes="{peak}">{human_bytes(peak)}</span> at the peak for '
            f"{runs} run{'s' if runs != 1 else ''} (one per ticked model, every result kept), of at most "
            f"{human_bytes(limit)}")
    rows = [
        ("time step dt", f'<span id="plan-dt">{quantity_text(plan.dt, TIME_UNITS, 5)}</span>'),
        ("steps", f'<span id="plan-steps">{plan.steps:,}</span>' + (" per particle" if beam else "")),
        ("saved states", f"{plan.saved_states:,} (every {plan.save_every})"),
        ("memory estimate", per_run),
        ("memory, all runs", side),
        ("fastest time scale", period),
        ("resolution", f"{number_text(plan.steps_per_period, 4)} steps per period" if plan.steps_per_period else "–"),
    ]
    if beam:
        rows.insert(0, ("particles", f'<span id="plan-particles">{scenario.particle_count:,}</span>'))
    if getattr(plan, "adaptive", False):
        at = 2 if beam else 1
        rows[at] = ("steps (at the initial dt)", rows[at][1])
        rows.insert(at, ("adaptive dt range", f"{quantity_text(plan.dt_min, TIME_UNITS, 4)} … "
                                              f"{quantity_text(plan.dt_max, TIME_UNITS, 4)}"))
    body = "".join(f"<tr><th>{k}</th><td>{v}</td></tr>" for k, v in rows)
    return f'<table class="ro-plan" id="plan-readout">{body}</table>'


PLAN_CSS = """
table.ro-plan { border-collapse: collapse; font-size: 13px; margin: 2px 0 0 8px; }
table.ro-plan th { text-align: left; font-weight: 500; color: #4a5a6a; padding: 1px 12px 1px 0; }
table.ro-plan td { font-variant-numeric: tabular-nums; padding: 1px 0; }
"""


class RunEditor(Viewer):
    """[run] inputs and the plan the engine makes from them, updated on every edit."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.board = ErrorBoard(state)
        self.cache = RowCache(state)
        self.rows = []
        self._form = pn.Column(sizing_mode="stretch_width", margin=0)
        self._plan = html_pane(plan_html(state.plan, state.error, len(state.models), state.scenario, state.models),
                               stylesheets=[PLAN_CSS],
                                  sizing_mode="stretch_width", margin=(6, 0))
        self._layout = pn.Column(self._form, self._plan, sizing_mode="stretch_width", margin=0)
        state.param.watch(self._rebuild, "layout_version")
        state.param.watch(self._show_plan, ["plan", "error", "models"])
        self._rebuild()

    def __panel__(self):
        return self._layout

    def _show_plan(self, *_):
        self._plan.object = plan_html(self.state.plan, self.state.error, len(self.state.models), self.state.scenario,
                                     self.state.models)

    def _rebuild(self, *_):
        state = self.state
        self.board.reset()
        mode = state.step_mode()
        mode_select = pn.widgets.Select(options={v: k for k, v in schema.STEP_MODES.items()}, value=mode,
                                        width=214, margin=(2, 4), css_classes=["in-run-step-mode"])
        mode_select.param.watch(lambda e: state.set_step_mode(e.new), "value")
        pusher = self.cache.row(("run", "pusher"), "pusher", "choice", doc="particle pusher",
                          default=schema.run_default("pusher"), choices=schema.pusher_names())
        reaction = self.cache.row(("run", "radiation_reaction"), "radiation reaction", "choice",
                            doc="the scenario's own model (the CLI runs it); the lab runs the models ticked in the Run card, and a change here ticks the new one",
                            default=schema.run_default("radiation_reaction"), choices=schema.reaction_names())
        step_default = DEFAULT_STEPS_PER_PERIOD if mode == "steps_per_period" else REQUIRED
        self.rows = [
            run_row(self.cache, "duration", REQUIRED),
            run_row(self.cache, mode, step_default),
            pusher,
            reaction,
            run_row(self.cache, "save_every", schema.run_default("save_every")),
            run_row(self.cache, "max_steps", schema.run_default("max_steps")),
        ]
        adaptive = bool(state.value(("run", "adaptive")))
        shown = {"duration", "dt", "steps_per_period", "pusher", "radiation_reaction", "save_every", "max_steps"}
        for key in schema.run_keys():
            if key in shown or (key in schema.ADAPTIVE_ONLY and not adaptive and state.value(("run", key)) is None):
                continue
            if key in schema.RUN_ENTRIES:
                self.rows.append(run_row(self.cache, key, schema.run_default(key)))
            else:
                # a [run] key this editor does not know yet: a plain box, values as in a file
                self.rows.append(self.cache.row(("run", key), key, "scalar", doc="see the scenario schema",
                                          default=schema.run_default(key)))
        for row in self.rows:
            self.board.add(row)
        reference = schema.pusher_reference(state.value(("run", "pusher")) or schema.run_default("pusher"))
        self._form.objects = [
            self.rows[0],
            pn.Row(html_pane('<span class="ro-label">time step from</span>', width=128, margin=(8, 4, 0, 8)),
                   mode_select, margin=0),
            *self.rows[1:3],
            html_pane(f'<div class="ro-doc">{html.escape(reference)}</div>', margin=(0, 8, 0, 140))
            if reference else pn.Spacer(height=0),
            *self.rows[3:],
        ]
