"""Run summary: headline numbers of every model run side by side, the engine's warnings, partial-run marks."""

import html
import math

from panel.viewable import Viewer

from ..format import TIME_UNITS, energy_text, number_text, quantity_text
from ..theme import html_pane
from .palette import MODEL_LABELS, MODEL_STYLES
from .runs import runs_of

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
    ("photons", "photons recorded (real photons)", lambda v: v),
    ("steps", "steps", lambda v: f"{int(v):,}"),
    ("wall_time", "wall time", lambda v: quantity_text(v, TIME_UNITS, 3)),
)

#: rows only some runs have (the others show a dash); shown only when a run has them
OPTIONAL_ROWS = ("photons",)


def photon_count(result):
    """'n recorded (N real)' for a run with recorded photons, '–' for a model that records none."""
    photons = getattr(result, "photons", None)
    if photons is None:
        return "–"
    text = f"{len(photons):,} ({float(photons.weight.sum()):.4g} real)"
    if photons.dropped:
        text += f"; {photons.dropped:,} more not kept"
    return text


def summary_html(comparison, stale=False):
    """HTML table of the headline numbers of every model run (ids ``sum-<key>-<model>`` for tests)."""
    results = runs_of(comparison)
    if not results:
        return '<div class="ro-note" id="summary-empty">No results yet: press Run.</div>'
    head = ["<th>quantity</th>"]
    for name, r in results.items():
        badge = ('<span class="ro-badge complete">complete</span>' if r.complete else
                 f'<span class="ro-badge partial" id="partial-{name}">partial: '
                 f'{html.escape(str(getattr(r, "status", r.meta.get("stop_reason", "stopped"))))}</span>')
        style = MODEL_STYLES[name]
        dashed = style["line_dash"] != "solid"
        swatch = f"border-top:3px {'dashed' if dashed else 'solid'} {style['color']}"
        head.append(f'<th title="radiation_reaction = {html.escape(name)}"><span class="ro-swatch" '
                    f'style="{swatch}"></span>{html.escape(MODEL_LABELS[name])}{badge}</th>')
    summaries = {name: (r.summary() if len(r.t) else None) for name, r in results.items()}
    if any(getattr(r, "photons", None) is not None for r in results.values()):
        for name, r in results.items():
            if summaries[name] is not None:
                summaries[name] = {**summaries[name], "photons": photon_count(r)}
    body = []
    for key, label, fmt in ROWS:
        if key in OPTIONAL_ROWS and not any(s is not None and key in s for s in summaries.values()):
            continue
        cells = []
        for name in results:
            s = summaries[name]
            if s is None:
                text = "no saved states"
            elif key in s:
                text = fmt(s[key])
            elif key in OPTIONAL_ROWS:
                text = "–"
            else:  # a beam run's summary has other keys: its numbers are in the Beam tab
                text = "see the Beam tab"
            cells.append(f'<td id="sum-{key}-{name}">{html.escape(text)}</td>')
        body.append(f"<tr><th>{html.escape(label)}</th>{''.join(cells)}</tr>")
    note = ('<div class="ro-note" style="font-size:12px;color:#52606d;margin-top:4px">'
            "The run with no reaction force keeps its energy; its radiated energy is what it would radiate."
            "</div>" if "none" in results else "")
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
            items.append(f"<li><b>{html.escape(MODEL_LABELS.get(name, name))}</b> ({html.escape(str(w.get('kind', 'warning')))}{at}): "
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
