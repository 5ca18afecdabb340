"""Beam view: energy distribution over time, beam statistics and a few orbits of a BeamResult.

Display only: every number comes from the engine's BeamResult (``stats`` and the saved
per-particle arrays); this module histograms and thins them for drawing on the worker thread,
so a beam of 1e5 particles sends only a few hundred thousand numbers to the browser.
"""

import html
from types import SimpleNamespace

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, Legend
from panel.viewable import Viewer

from ..format import TIME_UNITS, pick_unit
from .decimate import stride_indices
from .palette import DRAW_ORDER, E_PALETTE, MODEL_LABELS, MODEL_STYLES, new_figure, show_legend_items
from .runs import reference_run, runs_of

#: most saved times histogrammed (rows of the heat map); common practice, no source
MAX_HEAT_TIMES = 300
#: energy bins of the heat map
HEAT_BINS = 80
#: most particles drawn in the orbit projections, and most points per drawn orbit
MAX_ORBIT_PARTICLES = 50
MAX_ORBIT_POINTS = 300
#: statistics curves (engine keys) and their axis labels
CURVES = (("rms_gamma_spread", "rms spread of gamma"), ("emittance_x", "emittance x (m rad)"),
          ("emittance_y", "emittance y (m rad)"), ("radiated_energy", "radiated energy (J)"))
NO_PARTICLES = ("Per-particle energies were not saved (run.save = \"statistics\"): the energy "
                "distribution and the orbits cannot be drawn; set run.save = \"all\" to see them.")


def is_beam(comparison):
    """True when the comparison holds BeamResults."""
    run = reference_run(comparison)
    return run is not None and hasattr(run, "stats") and hasattr(run, "has_particles")


def _heat(results, time_scale):
    """Histograms of gamma per (thinned) saved time on common bins, or None without per-particle gamma."""
    usable = {n: r for n, r in results.items() if r.gamma is not None and len(r.t)}
    if not usable:
        return None
    finite = [g[np.isfinite(g)] for g in (r.gamma for r in usable.values())]
    finite = [f for f in finite if f.size]
    if not finite:
        return None
    lo = min(float(f.min()) for f in finite)
    hi = max(float(f.max()) for f in finite)
    if hi <= lo:
        hi = lo + max(abs(lo) * 1e-6, 1e-12)
    edges = np.linspace(lo, hi, HEAT_BINS + 1)
    out = {}
    for name, r in usable.items():
        rows = stride_indices(len(r.t), MAX_HEAT_TIMES)
        image = np.empty((HEAT_BINS, len(rows)))
        for j, k in enumerate(rows):
            g = r.gamma[k]
            image[:, j] = np.histogram(g[np.isfinite(g)], bins=edges)[0]
        t = r.t[rows] / time_scale
        width = float(t[-1] - t[0]) or 1.0
        out[name] = {"image": [image], "x": [float(t[0])], "y": [lo], "dw": [width], "dh": [hi - lo]}
    return out


def _orbits(results):
    """x-z and x-y lines of at most MAX_ORBIT_PARTICLES particles, thinned in time."""
    out, drawn = {}, 0
    for name, r in results.items():
        if r.x is None or not len(r.t):
            out[name] = {"x": [], "y": [], "z": []}
            continue
        chosen = stride_indices(r.x.shape[1], MAX_ORBIT_PARTICLES)
        rows = stride_indices(r.x.shape[0], MAX_ORBIT_POINTS)
        pts = r.x[rows][:, chosen, :]  # (rows, particles, 3) m
        out[name] = {axis: [pts[:, i, a] for i in range(len(chosen))] for a, axis in enumerate("xyz")}
        drawn = max(drawn, len(chosen))
    return out, drawn


def prepare_beam(comparison):
    """Drawing data of a beam Comparison (runs on the worker thread).

    Returns
    -------
    dict
        ``time_unit``/``time_scale`` (s per unit); ``curves`` {model: {t, <stat keys>}} (SI, t in
        the time unit); ``heat`` {model: image source data} or None; ``orbits`` {model: {x, y, z}
        lists of arrays in m}; ``drawn`` particles per run; ``count`` particles in the beam.
    """
    results = runs_of(comparison)
    t_max = max((float(r.t[-1]) for r in results.values() if len(r.t)), default=0.0)
    time_unit, time_scale = pick_unit(t_max, TIME_UNITS)
    curves = {}
    for name, r in results.items():
        stats = r.stats or {}
        t = np.asarray(stats.get("t", r.t), dtype=float)
        curves[name] = {"t": t / time_scale}
        for key, _ in CURVES:
            values = stats.get(key)
            curves[name][key] = np.full(len(t), np.nan) if values is None else np.asarray(values, dtype=float)
    orbits, drawn = _orbits(results)
    count = max((r.count for r in results.values()), default=0)
    return {"time_unit": time_unit, "time_scale": time_scale, "curves": curves,
            "heat": _heat(results, time_scale), "orbits": orbits, "drawn": drawn, "count": count}


def _empty_run():
    empty = np.empty(0)
    return SimpleNamespace(t=empty, x=np.empty((0, 3)), gamma=empty, power=empty,
                           radiated_energy=empty, chi=empty)


def single_view_comparison(comparison):
    """What the one-particle views draw for a beam: particle 0's runs, or nothing without particle arrays."""
    results = {name: (r.particle(0) if r.has_particles and r.count else _empty_run())
               for name, r in runs_of(comparison).items()}
    damped = getattr(comparison, "damped", None)
    reference = next((name for name, r in runs_of(comparison).items() if r is damped), None)
    return SimpleNamespace(results=results, damped=results.get(reference))


class BeamView(Viewer):
    """Energy distribution (heat map), statistics curves and orbit projections of a beam run."""

    def __init__(self, state, **params):
        super().__init__(**params)
        self.state = state
        self.message = pn.pane.HTML("", sizing_mode="stretch_width")
        self.curve_sources = {name: ColumnDataSource({"t": [], **{k: [] for k, _ in CURVES}})
                              for name in DRAW_ORDER}
        self.heat_sources = {name: ColumnDataSource({"image": [], "x": [], "y": [], "dw": [], "dh": []})
                             for name in DRAW_ORDER}
        self.orbit_sources = {(name, plane): ColumnDataSource({"xs": [], "ys": []})
                              for name in DRAW_ORDER for plane in ("x-z", "x-y")}
        self.curve_figures = []
        for key, label in CURVES:
            fig = new_figure(label, "t", label, height=230)
            items = []
            for name in DRAW_ORDER:
                line = fig.line("t", key, source=self.curve_sources[name], **MODEL_STYLES[name])
                items.append((MODEL_LABELS[name], [line]))
            fig.add_layout(Legend(items=items, location="top_left"), "right")
            self.curve_figures.append(fig)
        self.heat_figures = {}
        for name in DRAW_ORDER:
            fig = new_figure(f"gamma distribution over time, {MODEL_LABELS[name]}", "t", "gamma", height=260)
            fig.image(image="image", x="x", y="y", dw="dw", dh="dh", palette=E_PALETTE,
                      source=self.heat_sources[name])
            self.heat_figures[name] = fig
        self.orbit_figures = []
        for plane, (a, b) in (("x-z", ("z", "x")), ("x-y", ("x", "y"))):
            fig = new_figure(f"orbits, {plane} projection", f"{a} (m)", f"{b} (m)", height=300)
            items = []
            for name in DRAW_ORDER:
                style = dict(MODEL_STYLES[name], line_width=1, line_alpha=0.6)
                lines = fig.multi_line("xs", "ys", source=self.orbit_sources[(name, plane)], **style)
                items.append((MODEL_LABELS[name], [lines]))
            fig.add_layout(Legend(items=items, location="top_left"), "right")
            self.orbit_figures.append(fig)
        self.heat_panes = {name: pn.pane.Bokeh(fig, sizing_mode="stretch_width", visible=False)
                           for name, fig in self.heat_figures.items()}
        self.heat_row = pn.GridBox(*self.heat_panes.values(), ncols=2, sizing_mode="stretch_width")
        self.orbit_row = pn.Row(*self.orbit_figures, sizing_mode="stretch_width")
        self.layout = pn.Column(self.message, self.heat_row, pn.GridBox(*self.curve_figures, ncols=2,
                                sizing_mode="stretch_width"), self.orbit_row, sizing_mode="stretch_width")
        state.param.watch(self._show, "prepared")
        self._show()

    def __panel__(self):
        return self.layout

    def _show(self, *_):
        prepared = self.state.prepared or {}
        data = prepared.get("beam")
        if data is None:
            self.message.object = '<div class="ro-note">Run a beam scenario (one with a [beam] table) to see it here.</div>'
            self.heat_row.visible = self.orbit_row.visible = False
            return
        notes = []
        for fig in self.curve_figures + list(self.heat_figures.values()):
            fig.xaxis.axis_label = f"t ({data['time_unit']})"
        show_legend_items(self.curve_figures + self.orbit_figures, data["curves"])
        for name in DRAW_ORDER:
            curves = data["curves"].get(name)
            self.curve_sources[name].data = curves if curves else {"t": [], **{k: [] for k, _ in CURVES}}
        heat = data["heat"]
        self.heat_row.visible = heat is not None
        for name in DRAW_ORDER:
            self.heat_sources[name].data = (heat or {}).get(name) or {"image": [], "x": [], "y": [], "dw": [], "dh": []}
            self.heat_panes[name].visible = name in (heat or {})
        if heat is None:
            notes.append(NO_PARTICLES)
        self.orbit_row.visible = data["drawn"] > 0
        for name in DRAW_ORDER:
            orbit = data["orbits"].get(name, {"x": [], "y": [], "z": []})
            self.orbit_sources[(name, "x-z")].data = {"xs": list(orbit["z"]), "ys": list(orbit["x"])}
            self.orbit_sources[(name, "x-y")].data = {"xs": list(orbit["x"]), "ys": list(orbit["y"])}
        if data["drawn"]:
            notes.append(f"Orbits: {data['drawn']} of {data['count']:,} particles drawn per run, each thinned to "
                         f"at most {MAX_ORBIT_POINTS} points (display only). The heat map histograms every "
                         f"particle at up to {MAX_HEAT_TIMES} saved times.")
        notes.append("The Results tab's orbit and time-series plots show particle 0 of the beam.")
        self.message.object = "".join(f'<div class="ro-note">{html.escape(n)}</div>' for n in notes)
