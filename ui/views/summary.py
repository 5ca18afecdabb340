"""Run summary: headline numbers of both runs side by side, the engine's warnings, partial-run marks."""

import html
import math

from panel.viewable import Viewer

from ..format import TIME_UNITS, energy_text, number_text, quantity_text
from ..theme import html_pane

RUNS = ("damped", "undamped")

SUMMARY_CSS = """
table.ro-summary { border-collapse: collapse; font-size: 13.5px; min-width: 560px; }
table.ro-summary th, table.ro-summary td { padding: 4px 14px 4px 0; border-bottom: 1px solid #e3e8ee; }
table.ro-summary thead th { text-align: left; color: #1f2933; border-bottom: 2px solid #9aa9b8; }
table.ro-summary tbody th { text-align: left; font-weight: 500; color: #4a5a6a; }
table.ro-summary td { font-variant-numeric: tabular-nums; }
.ro-badge { display: inline-block; padding: 1px 7px; border-radius: 9px; font-size: 11.5px;
            font-weight: 600; margin-left: 6px; }
.ro-badge.partial { background: #fde7c8; color: #8a4b00; }
.ro-badge.complete { background: #dcefe2; color: #1e6b3a; }
.ro-stale { color: #8a4b00; font-size: 12.5px; margin: 4px 0; }
.ro-warnings { margin: 8px 0 0 0; padding-left: 18px; font-size: 13px; color: #7a3e00; }
.ro-swatch { display: inline-block; width: 22px; height: 0; vertical-align: middle; margin-right: 6px; }
"""

#: (key, label, formatter) of the summary rows; values from Result.summary() (SI)
ROWS = (
    ("end_time", "end time", lambda v: quantity_text(v, TIME_UNITS, 6)),
    ("final_energy", "final energy γmc²", energy_text),
    ("final_kinetic_energy", "final kinetic energy", energy_text),
    ("energy_radiated", "energy radiated", energy_text),
    ("fraction_lost", "energy radiated / initial kinetic energy", lambda v: number_text(v, 5)),
    ("peak_power", "peak Liénard power", lambda v: f"{number_text(v, 5)} W"),
    ("peak_chi", "peak χ", lambda v: number_text(v, 5)),
    ("energy_balance_residual", "energy-balance residual", lambda v: f"{v:.2e}" if math.isfinite(v) else "–"),
    ("steps", "steps", lambda v: f"{int(v):,}"),
    ("wall_time", "wall time", lambda v: quantity_text(v, TIME_UNITS, 3)),
)


def summary_html(comparison, stale=False):
    """HTML table of the headline numbers of both runs (ids ``sum-<key>-<run>`` for tests)."""
    if comparison is None:
        return '<div class="ro-note" id="summary-empty">No results yet: press Run.</div>'
    results = {name: getattr(comparison, name) for name in RUNS}
    head = ["<th>quantity</th>"]
    for name, r in results.items():
        badge = ('<span class="ro-badge complete">complete</span>' if r.complete else
                 f'<span class="ro-badge partial" id="partial-{name}">partial: '
                 f'{html.escape(str(getattr(r, "status", r.meta.get("stop_reason", "stopped"))))}</span>')
        swatch = ("border-top:3px solid #c2410c" if name == "damped" else "border-top:3px dashed #1d5f8a")
        model = r.meta.get("radiation_reaction", "")
        label = f"{name} ({model})" if model and name == "damped" else name
        head.append(f'<th><span class="ro-swatch" style="{swatch}"></span>{html.escape(label)}{badge}</th>')
    summaries = {name: (r.summary() if len(r.t) else None) for name, r in results.items()}
    body = []
    for key, label, fmt in ROWS:
        cells = []
        for name in RUNS:
            s = summaries[name]
            if s is None:
                text = "no saved states"
            elif key in s:
                text = fmt(s[key])
            else:  # a beam run's summary has other keys: its numbers are in the Beam tab
                text = "see the Beam tab"
            cells.append(f'<td id="sum-{key}-{name}">{html.escape(text)}</td>')
        body.append(f"<tr><th>{html.escape(label)}</th>{''.join(cells)}</tr>")
    note = ('<div class="ro-note" style="font-size:12px;color:#52606d;margin-top:4px">'
            "The undamped run feels no reaction force; its radiated energy is what it would radiate.</div>")
    stale_note = ('<div class="ro-stale" id="results-stale">The scenario has been edited since this run; '
                  "press Run to update.</div>" if stale else "")
    table = (f'<table class="ro-summary" id="summary-table"><thead><tr>{"".join(head)}</tr></thead>'
             f'<tbody>{"".join(body)}</tbody></table>')
    return stale_note + table + note + warnings_html(results)


def warnings_html(results):
    """The engine's warnings of every run as a plain list ('' when there are none)."""
    items = []
    for name, r in results.items():
        for w in r.warnings or []:
            when = w.get("time")
            at = f", t = {quantity_text(when, TIME_UNITS, 4)}" if isinstance(when, (int, float)) else ""
            items.append(f"<li><b>{html.escape(name)}</b> ({html.escape(str(w.get('kind', 'warning')))}{at}): "
                         f"{html.escape(str(w.get('message', '')))}</li>")
    if not items:
        return ""
    return ('<div class="ro-warnings-title"><b>Engine warnings</b></div>'
            f'<ul class="ro-warnings" id="warnings">{"".join(items)}</ul>')


class SummaryView(Viewer):
    """The summary table, updated when a run finishes or the scenario is edited after it."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self._pane = html_pane(summary_html(None), stylesheets=[SUMMARY_CSS], sizing_mode="stretch_width",
                                  margin=(4, 8))
        state.param.watch(self._show, ["comparison", "scenario"])
        self._show()

    def __panel__(self):
        return self._pane

    def _show(self, *_):
        self._pane.object = summary_html(self.state.comparison, self.state.results_stale)
