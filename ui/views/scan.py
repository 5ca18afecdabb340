"""Scan tab: vary one or two entries of the current scenario and plot a summary quantity.

A view only: the scan is ``tracker.sweep`` (on a worker thread, with progress and cancel);
the entries offered come from the same registries as the forms (``tracker.fields.MODELS``
parameters, ``ui.schema`` particle and run entries, the pusher and damping registries).
One key gives a line, two keys a heat map; clicking a point opens that point's damped and
undamped runs in the Results tab (the scan keeps them in memory).
"""

import html
import math
import threading

import numpy as np
import panel as pn
from bokeh.models import ColorBar, ColumnDataSource, LinearColorMapper, TapTool
from bokeh.palettes import Viridis256
from panel.viewable import Viewer

from tracker import ScenarioError, sweep
from tracker.fields import MODELS as FIELD_MODELS
from tracker.scan.keys import dimension, field_param
from tracker.scan.point import QUANTITIES
from tracker.units import SI_UNITS

from .. import schema
from ..format import energy_unit, unit_label
from ..theme import html_pane
from .document import apply_to_models
from .palette import new_figure

NONE = "(none)"
VARIANTS = {"damped": "damped", "undamped": "undamped", "ratio damped/undamped": "ratio"}
#: the lab keeps every point's runs in memory for the click-through: bound the scan size
MAX_POINTS = 400
POLL_MS = 200


def scan_keys(scenario):
    """{key path: (label, dimension, current value)} a scan of ``scenario`` may vary.

    Scalar and choice entries present in the scenario: field parameters from the field
    registry, particle and run entries from the forms' schema, beam entries from
    ``tracker.inputs``, pusher and damping model.
    """
    if scenario is None:
        return {}
    data = scenario.to_dict()
    out = {}
    for i, f in enumerate(data.get("field", [])):
        model = FIELD_MODELS[f["type"]]
        for p in model.params:
            if p.kind in ("scalar", "choice") and p.name in f:
                out[f"field[{i}].{p.name}"] = (f"field[{i}] {model.name}: {p.name}", p.dimension, f[p.name])
    from tracker import inputs

    for section, entries in (("particle", schema.PARTICLE_ENTRIES), ("beam", inputs.BEAM),
                             ("run", schema.RUN_ENTRIES)):
        table = data.get(section, {})
        for name, entry in entries.items():
            if entry.kind in ("scalar", "integer") and name in table:
                out[f"{section}.{name}"] = (f"{section}: {entry.label}", entry.dimension, table[name])
    for name in ("pusher", "radiation_reaction"):
        out[f"run.{name}"] = (f"run: {name.replace('_', ' ')}", "dimensionless", data["run"][name])
    return out


def choices_of(key, scenario):
    """Allowed values of a choice entry ([] for numbers)."""
    if key == "run.pusher":
        return list(schema.pusher_names())
    if key == "run.radiation_reaction":
        return list(schema.reaction_names())
    if key.startswith("field["):
        index = int(key[6:key.index("]")])
        param = field_param(FIELD_MODELS[scenario.fields[index].type], key.split(".", 1)[1])
        return list(param.choices) if param.kind == "choice" else []
    return []


def default_values(key, current, scenario):
    """Value text suggested for a key: its choices, or half to twice the current value."""
    choices = choices_of(key, scenario)
    if choices:
        return ",".join(choices)
    if isinstance(current, (int, float)) and current > 0:
        return f"{current / 2:.6g}:{current * 2:.6g}:5"
    return f"{current}"


def display_scale(dimension, values):
    """(unit label, SI per display unit) for an axis: energies in eV multiples, others in SI."""
    finite = [abs(v) for v in values if isinstance(v, float) and math.isfinite(v) and v != 0]
    if dimension == "energy" and finite:
        return energy_unit(max(finite))
    return unit_label(SI_UNITS.get(dimension, "")), 1.0


class ScanJob:
    """One ``tracker.sweep`` on a daemon thread; the page polls ``done``/``fraction``."""

    def __init__(self, scenario, vary):
        self.scenario, self.vary = scenario, vary
        self.result, self.error = None, ""
        self.done_points, self.total = 0, 0
        self.cancel = threading.Event()
        self._done = threading.Event()
        self._thread = threading.Thread(target=self._work, name="radorbit-lab-scan", daemon=True)

    def start(self):
        self._thread.start()
        return self

    def _progress(self, done, total):
        self.done_points, self.total = done, total

    def _work(self):
        try:
            keep = "results" if self.scenario.beam is None else None   # beams: too large to keep per point
            self.result = sweep(self.scenario, self.vary, keep=keep, progress=self._progress, cancel=self.cancel)
        except ScenarioError as exc:
            self.error = str(exc)
        except Exception as exc:  # one line on the page, never a traceback
            self.error = f"the scan failed: {type(exc).__name__}: {exc}"
        finally:
            self._done.set()

    @property
    def done(self):
        return self._done.is_set()

    def wait(self, timeout=None):
        return self._done.wait(timeout)


class ScanView(Viewer):
    """Pick entries and ranges, run the scan, plot one quantity; a click opens that point's runs.

    Parameters
    ----------
    state : ui.state.LabState
    on_open : callable() -> None, optional
        Called after a clicked point's runs were put into ``state`` (the app shows the Results tab).
    """

    def __init__(self, state, on_open=None, **params):
        super().__init__(**params)
        self.state = state
        self.on_open = on_open
        self.job = None
        self.result = None
        self._poller = None
        self.key1 = pn.widgets.Select(label="vary", width=300)
        self.values1 = pn.widgets.TextInput(label="values", width=240)
        self.key2 = pn.widgets.Select(label="and (heat map)", width=300)
        self.values2 = pn.widgets.TextInput(label="values", width=240)
        self.run = pn.widgets.Button(label="▶  Run scan", color="primary", width=140)
        self.cancel = pn.widgets.Button(label="■  Cancel", width=110, disabled=True)
        self.progress = pn.indicators.Progress(value=0, max=1000, active=False, sizing_mode="stretch_width",
                                               height=12)
        self.status = html_pane('<div class="ro-note" id="scan-status">No scan yet.</div>',
                                sizing_mode="stretch_width")
        self.quantity = pn.widgets.Select(label="quantity", width=300,
                                          options={label: name for name, (label, _) in QUANTITIES.items()},
                                          value="energy_radiated")
        self.variant = pn.widgets.RadioButtonGroup(options=VARIANTS, value="damped")
        self.line_source = ColumnDataSource({"x": [], "y": [], "index": []})
        self.map_source = ColumnDataSource({"x": [], "y": [], "w": [], "h": [], "value": [], "index": []})
        self.mapper = LinearColorMapper(palette=Viridis256, nan_color="#d0d5db")
        self.line_figure = new_figure("", "", "", height=340)
        self.line_figure.line("x", "y", source=self.line_source, color="#c2410c", line_width=2)
        self.line_figure.scatter("x", "y", source=self.line_source, size=9, color="#c2410c",
                                 selection_color="#111827", nonselection_alpha=0.6)
        self.map_figure = new_figure("", "", "", height=380)
        self.map_figure.rect("x", "y", "w", "h", source=self.map_source, line_color=None,
                             fill_color={"field": "value", "transform": self.mapper},
                             selection_line_color="#111827", nonselection_fill_alpha=0.85)
        self.map_figure.add_layout(ColorBar(color_mapper=self.mapper, width=12), "right")
        for fig in (self.line_figure, self.map_figure):
            fig.add_tools(TapTool(behavior="select"))
        self.line_pane = pn.pane.Bokeh(self.line_figure, sizing_mode="stretch_width", visible=False)
        self.map_pane = pn.pane.Bokeh(self.map_figure, sizing_mode="stretch_width", visible=False)
        self.line_source.selected.on_change("indices", self._tapped_line)
        self.map_source.selected.on_change("indices", self._tapped_map)
        self.key1.param.watch(lambda e: self._suggest(self.key1, self.values1), "value")
        self.key2.param.watch(lambda e: self._suggest(self.key2, self.values2), "value")
        self.run.on_click(lambda _: self.start())
        self.cancel.on_click(lambda _: self.job is not None and self.job.cancel.set())
        self.quantity.param.watch(lambda _: self.redraw(), "value")
        self.variant.param.watch(lambda _: self.redraw(), "value")
        state.param.watch(lambda _: self._refresh_keys(), "scenario")
        self._refresh_keys()
        note = html_pane('<div class="ro-note">Values: <code>start:stop:count</code> (add <code>:log</code> for '
                         "geometric steps), or a list <code>0.5 GeV, 1 GeV, 2 GeV</code>; numbers are SI. Every "
                         "point runs damped and undamped. Click a point to open its runs in the Results tab.</div>",
                         sizing_mode="stretch_width")
        self._layout = pn.Column(
            note, pn.Row(self.key1, self.values1), pn.Row(self.key2, self.values2),
            pn.Row(self.run, self.cancel), self.progress, self.status,
            pn.Row(self.quantity, self.variant), self.line_pane, self.map_pane, sizing_mode="stretch_width")

    def __panel__(self):
        return self._layout

    # ------------------------------------------------------------------ keys
    def _refresh_keys(self):
        keys = scan_keys(self.state.scenario)
        options = {label: key for key, (label, _, _) in keys.items()}
        keep1, keep2 = self.key1.value, self.key2.value
        self.key1.options = options
        self.key2.options = {NONE: NONE, **options}
        if keep1 in keys:
            self.key1.value = keep1
        elif options:
            self.key1.value = next(iter(options.values()))
        self.key2.value = keep2 if keep2 in keys else NONE
        self.run.disabled = self.state.scenario is None or self.running

    def _suggest(self, select, box):
        keys = scan_keys(self.state.scenario)
        if select.value in keys:
            box.value = default_values(select.value, keys[select.value][2], self.state.scenario)
        else:
            box.value = ""

    def vary(self):
        """{key path: value text} chosen on the page (ScenarioError for an empty box)."""
        out = {}
        for select, box in ((self.key1, self.values1), (self.key2, self.values2)):
            if select.value and select.value != NONE:
                if not box.value.strip():
                    raise ScenarioError(select.value, "give values, e.g. 5:50:10 or 1 GeV, 2 GeV.")
                out[select.value] = box.value
        return out

    # ------------------------------------------------------------------ running
    @property
    def running(self):
        return self.job is not None and not self.job.done

    def start(self):
        """Validate and start the scan on a worker thread; False (message shown) when refused."""
        if self.state.scenario is None or self.running:
            return False
        try:
            from tracker.scan.spec import normalise_vary

            vary = normalise_vary(self.vary(), True)
            points = math.prod(len(v) for _, v in vary)
            if points > MAX_POINTS:
                raise ScenarioError(vary[0][0], f"{points} points; the lab runs at most {MAX_POINTS} "
                                                "(use `radorbit sweep` for larger scans).")
        except ScenarioError as exc:
            self._say(str(exc), error=True)
            return False
        self.job = ScanJob(self.state.scenario, dict((k, list(v)) for k, v in vary)).start()
        self.run.disabled, self.cancel.disabled = True, False
        self.progress.param.update(value=0, active=True)
        self._say(f"running {points} points…")
        if pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
            self._poller = pn.state.add_periodic_callback(self.poll, period=POLL_MS)
        return True

    def poll(self):
        """Copy progress and, once done, the result into the page; True when the scan is over."""
        job = self.job
        if job is None:
            return True
        if not job.done:
            if job.total:
                self.progress.value = int(1000 * job.done_points / job.total)
                self._say(f"{job.done_points} of {job.total} points done"
                          + (" — cancelling…" if job.cancel.is_set() else ""))
            return False
        if self._poller is not None:
            self._poller.stop()
            self._poller = None
        self.progress.param.update(value=1000 if job.result is not None else 0, active=False)
        self.run.disabled, self.cancel.disabled = self.state.scenario is None, True
        if job.error:
            self._say(job.error, error=True)
            return True
        self.result = job.result
        counts = ", ".join(f"{n} {s}" for s, n in self.result.status_counts().items())
        failed = [f"point {r['index']}: {r['error']}" for r in self.result.rows if r["status"] == "failed"]
        self._say(f"{len(self.result)} points: {counts}" + ("; " + "; ".join(failed) if failed else ""),
                  error=bool(failed))
        self.redraw()
        return True

    def _say(self, text, error=False):
        color = "#b3261e" if error else "#52606d"
        self.status.object = (f'<div class="ro-note" id="scan-status" style="color:{color}">'
                              f"{html.escape(text)}</div>")

    # ------------------------------------------------------------------ drawing
    def plot_data(self):
        """What the plot shows: {'kind': 'line'|'map', axes labels, data} from the last scan."""
        scan = self.result
        name, variant = self.quantity.value, self.variant.value
        values = scan.quantity(name, variant)
        unit = QUANTITIES[name][1]
        if variant == "ratio":
            label, scale = "", 1.0
        elif unit == "J":
            label, scale = energy_unit(float(np.nanmax(np.abs(values))) if np.any(np.isfinite(values)) else 1.0)
        else:
            label, scale = unit_label(unit), 1.0
        y_title = f"{QUANTITIES[name][0]} ({variant})" + (f" [{label}]" if label else "")
        axes = []
        for key in scan.keys:
            column = list(scan.column(key))
            numeric = all(isinstance(v, float) for v in column)
            if numeric:
                unit_text, axis_scale = display_scale(dimension(scan.base, key), column)
                positions = [v / axis_scale for v in column]
                title = key + (f" [{unit_text}]" if unit_text else "")
                ticks = None
            else:
                names = list(dict.fromkeys(str(v) for v in column))
                positions = [float(names.index(str(v))) for v in column]
                title, ticks = key, {i: n for i, n in enumerate(names)}
            axes.append({"positions": positions, "title": title, "ticks": ticks})
        data = {"values": values / scale, "index": list(range(len(scan))), "title": y_title, "axes": axes}
        data["kind"] = "line" if len(axes) == 1 else "map"
        return data

    def redraw(self):
        if self.result is None:
            return
        d = self.plot_data()

        def change():
            if d["kind"] == "line":
                ax = d["axes"][0]
                self.line_source.data = {"x": ax["positions"], "y": list(d["values"]), "index": d["index"]}
                self.line_figure.xaxis.axis_label = ax["title"]
                self.line_figure.yaxis.axis_label = d["title"]
                self.line_figure.xaxis.major_label_overrides = ax["ticks"] or {}
            else:
                (ax, ay) = d["axes"][:2]
                w = _cell_sizes(ax["positions"])
                h = _cell_sizes(ay["positions"])
                self.map_source.data = {"x": ax["positions"], "y": ay["positions"], "w": w, "h": h,
                                        "value": list(d["values"]), "index": d["index"]}
                finite = [v for v in d["values"] if math.isfinite(v)]
                if finite:
                    low, high = min(finite), max(finite)
                    self.mapper.update(low=low, high=high if high > low else low + 1.0)
                self.map_figure.title.text = d["title"]
                self.map_figure.xaxis.axis_label = ax["title"]
                self.map_figure.yaxis.axis_label = ay["title"]
                self.map_figure.xaxis.major_label_overrides = ax["ticks"] or {}
                self.map_figure.yaxis.major_label_overrides = ay["ticks"] or {}
            self.line_pane.visible = d["kind"] == "line"
            self.map_pane.visible = d["kind"] == "map"

        apply_to_models(change)

    # ------------------------------------------------------------------ click-through
    def _tapped_line(self, _attr, _old, new):
        if new:
            self.open_point(self.line_source.data["index"][new[0]])

    def _tapped_map(self, _attr, _old, new):
        if new:
            self.open_point(self.map_source.data["index"][new[0]])

    def open_point(self, i):
        """Put point ``i``'s damped and undamped runs into the session's Results view."""
        from . import prepare_drawing

        scan = self.result
        if i not in scan.results:
            # a beam scan keeps no runs; re-running one here would block the page
            self._say(f"point {i}: the runs of a beam scan are not kept; run that point from the sidebar "
                      "(or `SweepResult.point(i)` in Python).")
            return
        comparison = scan.point(i)
        given = ", ".join(f"{k} = {v}" for k, v in zip(scan.keys, scan.given(i)))
        self.state.param.update(run_scenario=scan.scenario(i), comparison=comparison,
                                prepared=prepare_drawing(comparison), status="completed", progress=1.0,
                                status_text=f"scan point {i}: {given}")
        if self.on_open is not None:
            self.on_open()


def _cell_sizes(positions):
    """Width of each heat-map cell: the spacing of the distinct values around it."""
    distinct = sorted(set(positions))
    if len(distinct) == 1:
        return [1.0 if distinct[0] == 0 else abs(distinct[0]) * 0.2] * len(positions)
    edges = {}
    for j, v in enumerate(distinct):
        left = v - (distinct[j] - distinct[j - 1]) / 2 if j > 0 else v - (distinct[1] - distinct[0]) / 2
        right = v + (distinct[j + 1] - distinct[j]) / 2 if j < len(distinct) - 1 else \
            v + (distinct[-1] - distinct[-2]) / 2
        edges[v] = right - left
    return [edges[p] for p in positions]


class ScanTab(Viewer):
    """The Scan tab's content, built the first time the tab is shown (keeps page loads light)."""

    def __init__(self, state, on_open=None, **params):
        super().__init__(**params)
        self.state, self.on_open = state, on_open
        self._view = None
        self._holder = pn.Column(sizing_mode="stretch_width", margin=0)

    @property
    def view(self):
        """The ScanView (built now if the tab was never shown)."""
        if self._view is None:
            self._view = ScanView(self.state, on_open=self.on_open)
            self._holder.objects = [self._view]
        return self._view

    def cancel(self):
        """Ask a running scan to stop (a closed browser tab)."""
        if self._view is not None and self._view.job is not None:
            self._view.job.cancel.set()

    def __panel__(self):
        return self._holder
